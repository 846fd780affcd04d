// SPDX-License-Identifier: Apache-2.0
// The operator factory: modality -> (A, y, noise model).
#include "recofold/recon/forward_model.h"

#include "recofold/core/error.h"
#include "recofold/ops/fourier.h"
#include "recofold/ops/joseph_projector.h"
#include "recofold/ops/pixel_mask.h"
#include "recofold/recon/gridding.h"

namespace recofold {

std::shared_ptr<const NufftPlan> trajectory_plan(const Measurement& m, const std::string& file) {
  if (!m.mri || !m.mri->trajectory) throw InputError(file, "/mri/trajectory", "the measurement is not non-Cartesian");
  const Trajectory& t = *m.mri->trajectory;
  if (t.ny != m.ny || t.nx != m.nx)
    throw InputError(file, "/mri/trajectory",
                     "grid " + Shape{t.ny, t.nx}.to_string() + " differs from the measurement's " +
                         Shape{m.ny, m.nx}.to_string());
  check_kspace_points(t.kx, t.ky, m.ny, m.nx, file, "/mri/trajectory/k");
  return std::make_shared<const NufftPlan>(m.ny, m.nx, t.kx, t.ky, NufftOptions{});
}

ForwardModel make_forward_model(const Measurement& m, const std::string& file) {
  ForwardModel f;
  switch (m.modality) {
    case Modality::kMri: {
      if (!m.mri) throw InputError(file, "/mri", "an mri measurement without MRI data");
      if (m.mri->non_cartesian()) return make_trajectory_forward_model(trajectory_plan(m, file), m.mri->kspace,
                                                                      m.mri->coil_maps, m.mri->noise_sigma, file);
      f.op = make_sense_operator(*m.mri, file);
      f.y = kspace_vector(*m.mri);
      f.noise_sigma = m.mri->noise_sigma;
      f.complex_noise = true;
      f.measured_values = m.mri->sample_count() * m.mri->kspace.shape[0];
      return f;
    }
    case Modality::kCt: {
      if (!m.ct) throw InputError(file, "/ct", "a ct measurement without CT data");
      f.op = make_ct_operator(m, file);
      f.y = ct_sinogram_vector(m);
      f.complex_noise = false;
      f.measured_values = f.y.size();
      f.real_object = true;
      return f;
    }
    case Modality::kDenoise:
    case Modality::kInpaint: {
      if (!m.image) throw InputError(file, "/observed", "a " + std::string(to_string(m.modality)) +
                                                            " measurement without an observed image");
      const ImageProblemData& d = *m.image;
      auto op = std::make_unique<PixelMaskOperator>(d.pixel_mask);
      f.measured_values = op->kept();
      f.op = std::move(op);
      f.y = VecC(d.observed.size());
      for (Index p = 0; p < d.observed.size(); ++p)
        f.y[p] = cfloat(d.pixel_mask.data[static_cast<size_t>(p)] ? d.observed.data[static_cast<size_t>(p)] : 0.0f, 0.0f);
      f.noise_sigma = d.noise_sigma;
      f.complex_noise = false;
      f.real_object = true;
      return f;
    }
  }
  throw InputError(file, "modality", "'" + std::string(to_string(m.modality)) + "' has no forward model");
}

}  // namespace recofold
