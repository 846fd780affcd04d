// SPDX-License-Identifier: Apache-2.0
// The operator factory: modality -> (A, y, noise model).
#include "recofold/recon/forward_model.h"

#include "recofold/core/error.h"
#include "recofold/ops/fourier.h"
#include "recofold/ops/joseph_projector.h"
#include "recofold/ops/pixel_mask.h"

namespace recofold {

ForwardModel make_forward_model(const Measurement& m, const std::string& file) {
  ForwardModel f;
  switch (m.modality) {
    case Modality::kMri: {
      if (!m.mri) throw InputError(file, "/mri", "an mri measurement without MRI data");
      f.op = make_sense_operator(*m.mri, file);
      f.y = kspace_vector(*m.mri);
      f.noise_sigma = m.mri->noise_sigma;
      f.complex_noise = true;
      Index sampled = 0;
      for (uint8_t v : m.mri->mask.data) sampled += v != 0;
      f.measured_values = sampled * m.mri->kspace.shape[0];
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
