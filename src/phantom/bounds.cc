// SPDX-License-Identifier: Apache-2.0
// Point values and certified extremes of analytic phantoms (branch and bound on square cells).
#include "recofold/phantom/bounds.h"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <memory>
#include <queue>
#include <vector>

#include "phantom_geometry.h"
#include "recofold/core/error.h"

namespace recofold {

namespace {

// A component prepared for interval evaluation.
struct Part {
  bool ellipse = true;
  double rho = 0.0;
  double x0 = 0.0, y0 = 0.0, c = 1.0, s = 0.0;
  double ia2 = 1.0, ib2 = 1.0;  // 1/a^2, 1/b^2
  double inv_min = 1.0;         // 1/min(a, b)
};

std::vector<Part> prepare(const Phantom& p) {
  std::vector<Part> parts;
  parts.reserve(p.components.size());
  for (const Component& comp : p.components) {
    RECOFOLD_CHECK(comp.intensity.imag() == 0.0) << "value bounds need real intensities";
    const internal::ComponentFrame f = internal::make_frame(comp);
    Part q;
    q.ellipse = comp.kind == ComponentKind::kEllipse;
    q.rho = f.rho_re;
    q.x0 = f.x0;
    q.y0 = f.y0;
    q.c = f.cos_phi;
    q.s = f.sin_phi;
    q.ia2 = 1.0 / (f.a * f.a);
    q.ib2 = 1.0 / (f.b * f.b);
    q.inv_min = 1.0 / std::min(f.a, f.b);
    if (q.rho != 0.0) parts.push_back(q);
  }
  return parts;
}

inline double quad(const Part& q, double x, double y) {
  const double dx = x - q.x0, dy = y - q.y0;
  const double u = q.c * dx + q.s * dy, v = -q.s * dx + q.c * dy;
  return u * u * q.ia2 + v * v * q.ib2;
}

inline double shape_at(const Part& q, double x, double y) {
  const double r2 = quad(q, x, y);
  return q.ellipse ? (r2 <= 1.0 ? 1.0 : 0.0) : std::exp(-0.5 * r2);
}

// exp(-u^2/2) below this (relative to the peak) folds a blob into the remainder.
constexpr double kNegligibleSigmas = 8.5;  // exp(-36.1) = 2.1e-16

struct Cell {
  double cx = 0.0, cy = 0.0, half = 0.0;
  double base_lo = 0.0, base_hi = 0.0;  // constant parts and remainders
  double lo = 0.0, hi = 0.0;            // enclosure of f over the cell
  std::vector<int32_t> active;          // components still varying over the cell
};

// Computes the enclosure of `cell` from its parent's active list, moving
// components that became constant (or negligible) into the base.
void evaluate(const std::vector<Part>& parts, const std::vector<int32_t>& parent_active, Cell& cell) {
  const double radius = cell.half * std::sqrt(2.0);
  double lo = cell.base_lo, hi = cell.base_hi;
  cell.active.clear();
  for (int32_t k : parent_active) {
    const Part& q = parts[static_cast<size_t>(k)];
    const double u = std::sqrt(quad(q, cell.cx, cell.cy));
    const double reach = radius * q.inv_min;
    if (q.ellipse) {
      if (u + reach <= 1.0) {  // inside: constant rho
        cell.base_lo += q.rho;
        cell.base_hi += q.rho;
        lo += q.rho;
        hi += q.rho;
      } else if (u > 1.0 + reach) {  // outside: nothing
      } else {
        lo += std::min(0.0, q.rho);
        hi += std::max(0.0, q.rho);
        cell.active.push_back(k);
      }
    } else {
      const double u_lo = std::max(0.0, u - reach), u_hi = u + reach;
      const double g_hi = std::exp(-0.5 * u_lo * u_lo), g_lo = std::exp(-0.5 * u_hi * u_hi);
      if (u_lo >= kNegligibleSigmas) {  // negligible here and in every sub-cell
        if (q.rho > 0) cell.base_hi += q.rho * g_hi; else cell.base_lo += q.rho * g_hi;
        if (q.rho > 0) hi += q.rho * g_hi; else lo += q.rho * g_hi;
        continue;
      }
      if (q.rho > 0) {
        lo += q.rho * g_lo;
        hi += q.rho * g_hi;
      } else {
        lo += q.rho * g_hi;
        hi += q.rho * g_lo;
      }
      cell.active.push_back(k);
    }
  }
  cell.lo = lo;
  cell.hi = hi;
}

// Value at the cell centre: the active components exactly, the base as the
// interval [base_lo, base_hi] (its constant part is exact, the remainder is not).
void centre_value(const std::vector<Part>& parts, const Cell& cell, double* lo, double* hi) {
  double v = 0.0;
  for (int32_t k : cell.active) {
    const Part& q = parts[static_cast<size_t>(k)];
    v += q.rho * shape_at(q, cell.cx, cell.cy);
  }
  *lo = v + cell.base_lo;
  *hi = v + cell.base_hi;
}

struct Extreme {
  double bound = 0.0, attained = 0.0, x = 0.0, y = 0.0;
  bool resolved = false;
  long cells = 0;
};

// Best-first search of sup (sign = +1) or inf (sign = -1) of f.
Extreme search(const std::vector<Part>& parts, const ValueBoundsOptions& o, double sign) {
  // Work on g = sign * f: a cell's key is its upper bound of g.
  auto key = [sign](const Cell& c) { return sign > 0 ? c.hi : -c.lo; };
  auto cmp = [&](const Cell* a, const Cell* b) { return key(*a) < key(*b); };
  std::priority_queue<Cell*, std::vector<Cell*>, decltype(cmp)> heap(cmp);
  std::vector<std::unique_ptr<Cell>> store;
  std::vector<Cell*> free_cells;
  auto make = [&]() -> Cell* {
    if (!free_cells.empty()) {
      Cell* c = free_cells.back();
      free_cells.pop_back();
      return c;
    }
    store.push_back(std::make_unique<Cell>());
    return store.back().get();
  };

  std::vector<int32_t> all(parts.size());
  for (size_t k = 0; k < parts.size(); ++k) all[k] = static_cast<int32_t>(k);
  Cell* root = make();
  root->half = o.extent;
  evaluate(parts, all, *root);
  heap.push(root);

  const double limit = sign > 0 ? o.upper_limit : -o.lower_limit;
  const bool has_limit = std::isfinite(limit);
  double best = -std::numeric_limits<double>::infinity(), bx = 0.0, by = 0.0;
  Extreme e;
  while (!heap.empty()) {
    Cell* top = heap.top();
    const double bound = key(*top);
    if (bound - best <= o.tolerance || (has_limit && (bound <= limit || best > limit))) {
      e.resolved = true;
      break;
    }
    if (e.cells >= o.max_cells) break;
    heap.pop();
    ++e.cells;
    double vlo = 0.0, vhi = 0.0;
    centre_value(parts, *top, &vlo, &vhi);
    const double v = sign > 0 ? vlo : -vhi;  // a value g takes, from below
    if (v > best) {
      best = v;
      bx = top->cx;
      by = top->cy;
    }
    const double h = top->half * 0.5;
    for (int j = 0; j < 4; ++j) {
      Cell* child = make();
      child->cx = top->cx + ((j & 1) ? h : -h);
      child->cy = top->cy + ((j & 2) ? h : -h);
      child->half = h;
      child->base_lo = top->base_lo;
      child->base_hi = top->base_hi;
      evaluate(parts, top->active, *child);
      if (key(*child) > best) {
        heap.push(child);
      } else {
        free_cells.push_back(child);
      }
    }
    free_cells.push_back(top);
  }
  double bound = heap.empty() ? best : std::max(best, key(*heap.top()));
  if (heap.empty()) e.resolved = true;
  if (!std::isfinite(best)) {  // no cell was refined: the root answered
    double vlo = 0.0, vhi = 0.0;
    centre_value(parts, *root, &vlo, &vhi);
    best = sign > 0 ? vlo : -vhi;
    bx = root->cx;
    by = root->cy;
    bound = std::max(bound, best);
  }
  e.bound = sign * bound;
  e.attained = sign * best;
  e.x = bx;
  e.y = by;
  return e;
}

}  // namespace

double phantom_value(const Phantom& p, double x, double y) {
  double v = 0.0;
  for (const Component& comp : p.components) {
    const internal::ComponentFrame f = internal::make_frame(comp);
    const double dx = x - f.x0, dy = y - f.y0;
    const double u = f.cos_phi * dx + f.sin_phi * dy, w = -f.sin_phi * dx + f.cos_phi * dy;
    const double r2 = u * u / (f.a * f.a) + w * w / (f.b * f.b);
    if (comp.kind == ComponentKind::kEllipse) {
      if (r2 <= 1.0) v += f.rho_re;
    } else {
      v += f.rho_re * std::exp(-0.5 * r2);
    }
  }
  return v;
}

ValueBounds value_bounds(const Phantom& p, const ValueBoundsOptions& o) {
  RECOFOLD_CHECK(o.extent > 0.0 && o.tolerance > 0.0 && o.max_cells > 0) << "invalid ValueBoundsOptions";
  const std::vector<Part> parts = prepare(p);
  const Extreme hi = o.find_max ? search(parts, o, +1.0) : Extreme{};
  const Extreme lo = o.find_min ? search(parts, o, -1.0) : Extreme{};
  ValueBounds b;
  b.max_upper = hi.bound;
  b.max_attained = hi.attained;
  b.max_x = hi.x;
  b.max_y = hi.y;
  b.max_resolved = hi.resolved;
  b.min_lower = lo.bound;
  b.min_attained = lo.attained;
  b.min_x = lo.x;
  b.min_y = lo.y;
  b.min_resolved = lo.resolved;
  b.cells = hi.cells + lo.cells;
  return b;
}

}  // namespace recofold
