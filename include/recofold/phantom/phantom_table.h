// SPDX-License-Identifier: Apache-2.0
// Phantom tables: loading phantoms/*.toml, and the numeric component table of phantom files.
//
// TOML layout (every file in phantoms/ repeats this in its header comment):
//   name        = "shepp-logan"   optional string (default: the file name without extension)
//   description = "..."           optional string
//   fov_mm      = 256.0           optional, > 0 (default 256): width of the [-1,1] square in mm
//   phase0_deg  = 0.0             optional global constant phase, degrees
//   phase_gx    = 0.0             optional global linear phase, cycles per unit of the square
//   phase_gy    = 0.0               (phase = phase0 + 2 pi (gx x + gy y), exact in every evaluation)
//   [[ellipse]]                   a uniform ellipse; repeat for each
//   intensity = 1.0               required: a number, or [re, im] for a complex value
//   a = 0.5                       required, > 0: semi-axis along the ellipse's own x'
//   b = 0.5                       required, > 0: semi-axis along y'
//   x0 = 0.0                      optional centre (default 0)
//   y0 = 0.0
//   phi_deg = 0.0                 optional rotation, degrees counter-clockwise (default 0)
//   [[blob]]                      an anisotropic Gaussian rho exp(-x'^2/2a^2 - y'^2/2b^2);
//                                 same keys, a and b being standard deviations
// At least one component. Every error names the file, the line and the key
// ("phantoms/x.toml:12: ellipse[2].a: = -0.1; must be > 0").
//
// Component table (stored as tables["/phantom/components"] of a phantom
// file, io/image_file.h), float64 [rows, 9] with columns
//   object, type, intensity_re, intensity_im, a, b, x0, y0, phi_deg
// object: 0-based index of the object in a stack (always 0 for one phantom);
// type: 0 = ellipse, 1 = blob. Attributes: number_attrs fov_mm, phase0_rad,
// phase_gx, phase_gy, objects (count); text_attrs name, description, types.
#pragma once

#include <string>
#include <vector>

#include "recofold/core/image_record.h"
#include "recofold/phantom/phantom.h"

namespace recofold {

// HDF5 path of the component table inside a phantom file.
constexpr const char* kPhantomTablePath = "/phantom/components";

// Loads phantoms/NAME.toml. InputError (file, line, key) on any problem.
Phantom load_phantom_table(const std::string& path);

// Parses TOML text; `name` stands in for the file in messages.
Phantom parse_phantom_table(const std::string& text, const std::string& name);

// The component table of one phantom.
Table phantom_to_table(const Phantom& p);

// One table for a stack of objects (families): rows of every object, told apart
// by the `object` column. The objects must share fov_mm and the global phase
// (checked); name and description are taken from the first.
Table phantoms_to_table(const std::vector<Phantom>& objects);

// Rebuilds object `object` of a component table read from `file`. InputError
// naming the file and "/phantom/components" when a column is missing, a value
// is out of range, or the object has no rows.
Phantom phantom_from_table(const Table& table, const std::string& file, int object = 0);

// Every object of the table, in index order (objects 0 .. max index, each with rows).
std::vector<Phantom> phantoms_from_table(const Table& table, const std::string& file);

}  // namespace recofold
