// SPDX-License-Identifier: Apache-2.0
// Nested, non-overlapping ellipse regions for random families (region_tree.h).
#include "region_tree.h"

#include <algorithm>
#include <cmath>

#include "recofold/core/error.h"

namespace recofold::internal {

namespace {
constexpr int kBoundarySamples = 128;
constexpr double kTwoPi = 6.283185307179586476925286766559;

struct Circle {
  double c[kBoundarySamples], s[kBoundarySamples];
  Circle() {
    for (int j = 0; j < kBoundarySamples; ++j) {
      c[j] = std::cos(kTwoPi * j / kBoundarySamples);
      s[j] = std::sin(kTwoPi * j / kBoundarySamples);
    }
  }
};
const Circle& circle() {
  static const Circle table;
  return table;
}
}  // namespace

double quad_form(const ComponentFrame& e, double x, double y) {
  const double dx = x - e.x0, dy = y - e.y0;
  const double u = e.cos_phi * dx + e.sin_phi * dy, v = -e.sin_phi * dx + e.cos_phi * dy;
  return u * u / (e.a * e.a) + v * v / (e.b * e.b);
}

void boundary_quad_range(const ComponentFrame& f, const ComponentFrame& e, double* qmin, double* qmax) {
  // Boundary of F: x(t) = cF + aF cos t uF + bF sin t vF, uF = (cos, sin), vF = (-sin, cos).
  // In E's frame u(t) = al0 + al1 cos t + al2 sin t, v(t) = be0 + be1 cos t + be2 sin t.
  const double dx = f.x0 - e.x0, dy = f.y0 - e.y0;
  const double ce = e.cos_phi, se = e.sin_phi, cf = f.cos_phi, sf = f.sin_phi;
  const double al0 = ce * dx + se * dy, be0 = -se * dx + ce * dy;
  const double al1 = f.a * (ce * cf + se * sf), be1 = f.a * (-se * cf + ce * sf);
  const double al2 = f.b * (-ce * sf + se * cf), be2 = f.b * (se * sf + ce * cf);
  const double ia2 = 1.0 / (e.a * e.a), ib2 = 1.0 / (e.b * e.b);
  double lo = 1e300, hi = -1e300;
  const Circle& circ = circle();
  for (int j = 0; j < kBoundarySamples; ++j) {
    const double ct = circ.c[j], st = circ.s[j];
    const double u = al0 + al1 * ct + al2 * st, v = be0 + be1 * ct + be2 * st;
    const double q = u * u * ia2 + v * v * ib2;
    lo = std::min(lo, q);
    hi = std::max(hi, q);
  }
  // Between samples t_j, t_j+1 (spacing h) the function stays within
  // M2 h^2 / 8 of the chord (linear interpolation error), M2 >= |q''|:
  // q'' = 2 (u'^2 + u u'') / aE^2 + 2 (v'^2 + v v'') / bE^2 with
  // |u'|, |u''| <= |(al1, al2)| and |u| <= |al0| + |(al1, al2)|.
  const double ru = std::hypot(al1, al2), rv = std::hypot(be1, be2);
  const double m2 = 2.0 * (ru * ru + (std::abs(al0) + ru) * ru) * ia2 + 2.0 * (rv * rv + (std::abs(be0) + rv) * rv) * ib2;
  const double h = kTwoPi / kBoundarySamples;
  const double slack = m2 * h * h / 8.0;
  *qmin = std::max(0.0, lo - slack);
  *qmax = hi + slack;
}

bool inside_with_gap(const ComponentFrame& f, const ComponentFrame& e, double gap) {
  const double s = 1.0 - gap / std::min(e.a, e.b);
  if (!(s > 0.0)) return false;
  double qmin = 0.0, qmax = 0.0;
  boundary_quad_range(f, e, &qmin, &qmax);
  return qmax <= s * s;
}

bool apart_with_gap(const ComponentFrame& f, const ComponentFrame& e, double gap) {
  if (quad_form(f, e.x0, e.y0) <= 1.0) return false;  // E's centre inside F
  const double s = 1.0 + gap / std::min(e.a, e.b);
  double qmin = 0.0, qmax = 0.0;
  boundary_quad_range(f, e, &qmin, &qmax);
  return qmin > s * s;
}

RegionTree::RegionTree(const Component& support, double value) {
  RECOFOLD_CHECK(support.kind == ComponentKind::kEllipse) << "region tree root must be an ellipse";
  Node root;
  root.comp = support;
  root.frame = make_frame(support);
  root.value = value;
  nodes_.push_back(root);
}

int RegionTree::place(const Component& c, double value, double gap, int max_depth, int under, bool descend) {
  RECOFOLD_CHECK(c.kind == ComponentKind::kEllipse && under >= 0 && under < size()) << "bad region placement";
  const ComponentFrame f = make_frame(c);
  int at = under;
  if (!inside_with_gap(f, nodes_[static_cast<size_t>(at)].frame, gap)) return -1;
  for (;;) {
    int into = -1;
    for (int child : nodes_[static_cast<size_t>(at)].children) {
      const ComponentFrame& cf = nodes_[static_cast<size_t>(child)].frame;
      if (inside_with_gap(f, cf, gap)) {
        if (!descend) return -1;
        into = child;
        break;
      }
      if (!apart_with_gap(f, cf, gap)) return -1;
    }
    if (into < 0) break;
    at = into;
  }
  const Node& parent = nodes_[static_cast<size_t>(at)];
  if (parent.depth + 1 > max_depth) return -1;
  Node n;
  n.comp = c;
  n.frame = f;
  n.value = value;
  n.parent = at;
  n.depth = parent.depth + 1;
  nodes_.push_back(n);
  const int index = size() - 1;
  nodes_[static_cast<size_t>(at)].children.push_back(index);
  return index;
}

bool RegionTree::disc_clear(double x, double y, double radius, int region) const {
  Component disc;
  disc.kind = ComponentKind::kEllipse;
  disc.x0 = x;
  disc.y0 = y;
  disc.a = disc.b = radius;
  const ComponentFrame f = make_frame(disc);
  const Node& n = nodes_[static_cast<size_t>(region)];
  if (!inside_with_gap(f, n.frame, 0.0)) return false;
  for (int child : n.children)
    if (!apart_with_gap(f, nodes_[static_cast<size_t>(child)].frame, 0.0)) return false;
  return true;
}

int RegionTree::region_at(double x, double y) const {
  if (quad_form(nodes_[0].frame, x, y) > 1.0) return -1;
  int at = 0;
  for (;;) {
    int into = -1;
    for (int child : nodes_[static_cast<size_t>(at)].children)
      if (quad_form(nodes_[static_cast<size_t>(child)].frame, x, y) <= 1.0) {
        into = child;
        break;
      }
    if (into < 0) return at;
    at = into;
  }
}

double RegionTree::min_value() const {
  double v = nodes_[0].value;
  for (const Node& n : nodes_) v = std::min(v, n.value);
  return v;
}

double RegionTree::max_value() const {
  double v = nodes_[0].value;
  for (const Node& n : nodes_) v = std::max(v, n.value);
  return v;
}

void RegionTree::emit(Phantom* p) const {
  for (const Node& n : nodes_) {
    Component c = n.comp;
    const double parent_value = n.parent < 0 ? 0.0 : nodes_[static_cast<size_t>(n.parent)].value;
    c.intensity = cdouble(n.value - parent_value, 0.0);
    p->components.push_back(c);
  }
}

}  // namespace recofold::internal
