// SPDX-License-Identifier: Apache-2.0
// Private: nested, non-overlapping ellipse regions for random families (exact containment and separation tests).
//
// A family object's ellipses form a tree: every ellipse lies inside its
// parent and apart from its siblings, each with a gap, so the object is
// piecewise constant with the value of the deepest ellipse containing the
// point: a component's intensity is its region's value minus its parent's.
// Every value is then one of the region values (never a sum of overlaps), so
// non-negative region values give a non-negative object exactly.
//
// Tests (E, F ellipses; q_E(x) = x'^2/a^2 + y'^2/b^2 in E's frame; b_E the
// smaller semi-axis of E; sE = E scaled by s about its centre):
//   F + D(0, g) inside E   if  max over the boundary of F of q_E <= (1 - g/b_E)^2
//   F apart from E + D(0, g)  if  min over the boundary of F of q_E > (1 + g/b_E)^2
//                                 and the centre of E is outside F
// (E + D(0, g) lies inside (1 + g/b_E)E and sE + D(0, g) inside E for
// s = 1 - g/b_E, by support functions; a connected set meeting F either
// meets F's boundary or contains no point outside F). The extremes of q_E
// along F's boundary x(t) are enclosed by sampling t at 128 points and
// widening by M2 h^2 / 8 (h the spacing, M2 a bound of |q''|: q is a
// trigonometric polynomial of degree 2 in t, and a C^2 function stays within
// M2 h^2 / 8 of its chord), so both tests are conservative.
#pragma once

#include <vector>

#include "phantom_geometry.h"
#include "recofold/phantom/phantom.h"

namespace recofold::internal {

// Enclosure [*qmin, *qmax] of q_E along the boundary of F.
void boundary_quad_range(const ComponentFrame& f, const ComponentFrame& e, double* qmin, double* qmax);

// F grown by `gap` lies inside E.
bool inside_with_gap(const ComponentFrame& f, const ComponentFrame& e, double gap);
// F is apart from E grown by `gap`.
bool apart_with_gap(const ComponentFrame& f, const ComponentFrame& e, double gap);
// q_E at (x, y).
double quad_form(const ComponentFrame& e, double x, double y);

class RegionTree {
 public:
  // The root region (the object's support) with its absolute value.
  RegionTree(const Component& support, double value);

  // Places ellipse `c` (its intensity is ignored) with absolute value `value`
  // under the deepest region that contains it with `gap`, starting at region
  // `under` (0 = the root); it must also be apart with `gap` from that
  // region's children, and its depth at most `max_depth` (root = 0).
  // With descend = false it must become a child of `under` itself (it may
  // not fall inside one of `under`'s children). Returns the new region's
  // index, or -1 when it does not fit.
  int place(const Component& c, double value, double gap, int max_depth, int under = 0, bool descend = true);

  // True when the disc of `radius` about (x, y) lies inside `region` and
  // apart from all of its children (exact tests, no gap).
  bool disc_clear(double x, double y, double radius, int region) const;

  // Deepest region containing (x, y) (boundaries included), -1 outside the root.
  int region_at(double x, double y) const;

  int size() const { return static_cast<int>(nodes_.size()); }
  double value(int region) const { return nodes_[static_cast<size_t>(region)].value; }
  const Component& component(int region) const { return nodes_[static_cast<size_t>(region)].comp; }
  int parent(int region) const { return nodes_[static_cast<size_t>(region)].parent; }
  double min_value() const;
  double max_value() const;

  // Appends the ellipses to `p` in placement order (a parent precedes its
  // children), intensity = value - parent's value (root: its value).
  void emit(Phantom* p) const;

 private:
  struct Node {
    Component comp;
    ComponentFrame frame;
    double value = 0.0;
    int parent = -1;
    int depth = 0;
    std::vector<int> children;
  };
  std::vector<Node> nodes_;
};

}  // namespace recofold::internal
