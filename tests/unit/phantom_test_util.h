// SPDX-License-Identifier: Apache-2.0
// Shared helpers of the phantom unit tests (not a test binary itself).
#pragma once

#include <cstdlib>
#include <string>

#include "recofold/core/rng.h"
#include "recofold/phantom/phantom.h"
#include "recofold/phantom/phantom_table.h"

namespace recofold::testing {

// The source tree: $RECOFOLD_SOURCE_DIR (set by ctest) or derived from this file's path.
inline std::string source_dir() {
  if (const char* env = std::getenv("RECOFOLD_SOURCE_DIR")) return env;
  std::string here = __FILE__;
  return here.substr(0, here.rfind("/tests/unit/"));
}

inline Phantom load_repo_phantom(const std::string& name) {
  return load_phantom_table(source_dir() + "/phantoms/" + name + ".toml");
}

// A random component of the given kind, well inside the square.
inline Component random_component(Rng& rng, ComponentKind kind) {
  Component c;
  c.kind = kind;
  c.intensity = cdouble(rng.uniform(-1.0, 2.0), 0.0);
  c.a = kind == ComponentKind::kEllipse ? rng.uniform(0.1, 0.5) : rng.uniform(0.03, 0.15);
  c.b = kind == ComponentKind::kEllipse ? rng.uniform(0.1, 0.5) : rng.uniform(0.03, 0.15);
  c.x0 = rng.uniform(-0.3, 0.3);
  c.y0 = rng.uniform(-0.3, 0.3);
  c.phi_deg = rng.uniform(-180.0, 180.0);
  return c;
}

inline Phantom single(const Component& c) {
  Phantom p;
  p.name = "single";
  p.components = {c};
  return p;
}

}  // namespace recofold::testing
