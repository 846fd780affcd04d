// SPDX-License-Identifier: Apache-2.0
// Joseph's ray-driven projector and its exact transpose (matched pair) for parallel and fan beams.
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "recofold/core/scratch.h"
#include "recofold/ops/ct_geometry.h"
#include "recofold/ops/linear_operator.h"

namespace recofold {

struct Measurement;

// A = scale * P, where P is Joseph's projector (Joseph, IEEE TMI 1, 1982):
// each ray is walked one image row at a time when it is closer to vertical
// (|d_y| >= |d_x|), otherwise one column at a time; at every step the image is
// linearly interpolated between the two pixels of that row (column) that
// straddle the ray, and the sum is multiplied by the step length along the
// ray, pixel_size_mm / max(|d_x|, |d_y|). Pixels outside the grid count as
// zero (so interpolation fades to zero over the last pixel). (P x)_k therefore
// approximates the line integral of the image along ray k in intensity x mm.
//
// adjoint() applies exactly scale * P^T (the same interpolation weights
// scattered back), so the pair passes the adjoint test to float precision and
// suits iterative solvers. P is a real matrix; complex inputs are handled as
// real and imaginary parts separately (the imaginary part is projected only
// when it is non-zero), so <Ax, y> = <x, A^H y> holds for complex vectors too.
//
// Domain [ny, nx] (row-major image), range [views, detectors] (geometry.h).
//
// Loops: parallel beams walk each view row by row (column by column) with the
// detectors in the inner loop; fan beams walk ray by ray.
// Threads (OpenMP): the projector runs in parallel over views, each thread
// writing its own sinogram rows. The transpose runs in parallel over blocks
// of image rows (for row-stepped rays) and then over blocks of image columns
// (for column-stepped rays, into a transposed accumulator): every thread owns
// the pixels it writes, so there are no races and the result does not depend
// on the thread count. Safe to call concurrently on different vectors.
// Work buffers (padded grids, per-thread rows) are kept between calls, so a
// solver's repeated applies allocate nothing once sized; concurrent calls
// each get their own.
class JosephProjector final : public LinearOperator {
 public:
  // Throws InputError (field "ct geometry") listing every violation when the
  // geometry is invalid. `scale` is typically the attenuation per unit
  // intensity (1/mm), so A x is in line-integral units.
  explicit JosephProjector(CtGeometry geometry, double scale = 1.0);
  JosephProjector(const JosephProjector& other);  // copies the geometry and tables, not the buffers
  ~JosephProjector() override;

  void apply(const VecC& x, VecC& y) const override;
  void adjoint(const VecC& y, VecC& x) const override;
  // A^H A x through the kept buffers (no range vector allocated).
  void normal(const VecC& x, VecC& out) const override;
  Shape domain_shape() const override { return Shape{geometry_.ny, geometry_.nx}; }
  Shape range_shape() const override { return Shape{geometry_.view_count(), geometry_.detector_count}; }
  Index domain_size() const override { return geometry_.ny * geometry_.nx; }
  Index range_size() const override { return geometry_.view_count() * geometry_.detector_count; }
  std::string name() const override;
  // Every entry is a non-negative interpolation weight times |scale|, so the
  // sums are |scale| P 1 and |scale| P^T 1 (one projection and one back-projection).
  bool absolute_sums(VecF& row_sums, VecF& column_sums) const override;

  // Real-valued forms without complex copies: sinogram = scale * P image,
  // image = scale * P^T sinogram (outputs overwritten; sizes as the shapes).
  void project(const float* image, float* sinogram) const;
  void back_project(const float* sinogram, float* image) const;

  const CtGeometry& geometry() const { return geometry_; }
  double scale() const { return scale_; }

 private:
  // One ray in padded grid coordinates. For a row-stepped ray (by_rows) the
  // padded column at row r is start + r * slope (padded column p holds image
  // column p - 1; columns 0 and nx+1 are zero); column-stepped rays use the
  // transposed grid in the same way. Rows lo..hi (inclusive) are those where
  // the position lies in [0, n + 1); lo > hi means the ray misses the grid.
  struct Ray {
    float start = 0, slope = 0, weight = 0;
    int lo = 0, hi = -1;
    bool by_rows = true;
  };
  // A parallel-beam view: every ray shares slope, weight and stepping axis,
  // and ray j starts at start0 + j * delta, so the loops run over detectors
  // inside each image row (contiguous reads and writes).
  struct ParallelView {
    float start0 = 0, delta = 0, slope = 0, weight = 0;
    bool by_rows = true;
  };
  struct Workspace;
  void project_with(Workspace& ws, const float* image, float* sinogram) const;
  void back_project_with(Workspace& ws, const float* sinogram, float* image) const;
  void project_parallel(Workspace& ws, const float* rows, const float* cols, float* sinogram) const;
  void back_project_parallel(Workspace& ws, const float* sinogram, float* rows, float* cols) const;
  void project_rays(const float* rows, const float* cols, float* sinogram) const;
  void back_project_rays(const float* sinogram, float* rows, float* cols) const;

  CtGeometry geometry_;
  double scale_;
  bool parallel_ = false;
  std::vector<ParallelView> views_;  // parallel beams: [views]
  std::vector<Ray> rays_;            // fan beams: [views * detectors]
  bool any_by_columns_ = false;
  ScratchCache<Workspace> scratch_;
};

// The CT forward operator of a measurement: Joseph projector on the
// measurement's grid and geometry with scale = mu_per_mm, so that
// A x ~ m.ct->sinogram for an image x in phantom intensity units.
// Throws InputError naming `file` for an invalid or inconsistent record.
std::unique_ptr<JosephProjector> make_ct_operator(const Measurement& m, const std::string& file = "");

// The sinogram of a CT measurement as the flat vector solvers expect
// (real parts; layout [views, detectors]).
VecC ct_sinogram_vector(const Measurement& m);

}  // namespace recofold
