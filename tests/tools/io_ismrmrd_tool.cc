// SPDX-License-Identifier: Apache-2.0
// Writes small ISMRMRD raw files for the CLI tests (tests/cli/import_cli.py), valid or
// malformed, with libismrmrd itself: io_ismrmrd_tool KIND OUT.h5
//   good        4 coils, 16 x 16, readout oversampling 2, 8 noise scans, 2 navigators, 3 slices
//   noheader    acquisitions but no XML header
//   empty       a header and zero acquisitions
//   badlimits   encoding limits of 21 lines for a 16-line matrix
//   mixedcoils  one line with 2 of 4 channels
//   radial      a radial trajectory
#include <cstdio>
#include <string>

#include "unit/ismrmrd_fixtures.h"

int main(int argc, char** argv) {
  if (argc != 3) {
    std::fprintf(stderr, "usage: io_ismrmrd_tool good|noheader|empty|badlimits|mixedcoils|radial OUT.h5\n");
    return 2;
  }
  const std::string kind = argv[1];
  recofold_test::RawSpec s;
  if (kind == "good") {
    s.oversampling = 2;
    s.noise_scans = 8;
    s.navigators = 2;
    s.slices = 3;
  } else if (kind == "noheader") {
    s.write_header = false;
  } else if (kind == "empty") {
    s.write_lines = false;
  } else if (kind == "badlimits") {
    s.limit_max = 20;
  } else if (kind == "mixedcoils") {
    s.coils_of_line5 = 2;
  } else if (kind == "radial") {
    s.trajectory = ISMRMRD::TrajectoryType::RADIAL;
  } else {
    std::fprintf(stderr, "io_ismrmrd_tool: unknown kind '%s'\n", kind.c_str());
    return 2;
  }
  try {
    recofold_test::write_raw(argv[2], s);
  } catch (const std::exception& e) {
    std::fprintf(stderr, "io_ismrmrd_tool: %s\n", e.what());
    return 1;
  }
  return 0;
}
