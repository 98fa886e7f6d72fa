// zeeline/polarimetry/crosstalk.hpp -- residual polarisation crosstalk of a science cube: I -> Q, U, V and
// V -> Q, U, estimated from the data themselves and removed.
//
// Model (observed = X true), with the coefficients a (from I) and b (from V):
//   I_obs = I,   V_obs = V + a_V I,   Q_obs = Q + a_Q I + b_Q V,   U_obs = U + a_U I + b_U V.
// 1. Continuum wavelengths, where the true Q, U, V vanish: given (--continuum ranges), or found from the mean
//    I profile over the cube: samples with mean I >= max - f (max - min), f = continuum_depth_fraction
//    (default 0.002, i.e. outside ~2.5 Doppler widths of a Gaussian line), max and min of the 3-point
//    smoothed mean profile; at least min_continuum_samples are required.
// 2. a_X = sum(X I) / sum(I^2) over every finite continuum sample of every pixel (least squares through the
//    origin), sigma_a = sqrt(sum (X - a_X I)^2 / (n - 1)) / sqrt(sum I^2) (Press et al., Numerical Recipes,
//    sect. 15.2, with the scatter measured from the residuals).
// 3. V' = V - a_V I; the V noise sigma_V is the RMS of V' over the continuum samples; strong-V samples are
//    those with |V'| > strong_v_sigma * sigma_V (default 5). b_X = sum(X' V') / sum(V'^2) over them with
//    X' = X - a_X I, sigma_b as above. Genuine Zeeman Q, U are symmetric about the line centre while V is
//    antisymmetric, so they average out of the regression (common practice; it assumes no strong
//    Doppler gradients). With fewer than min_strong_v_samples strong-V samples b is not estimated (NaN,
//    left uncorrected, with a warning).
// Every pixel passes the maps' data-sanity check first (maps/data_sanity.hpp: non-finite or absurd samples,
// continuum I <= 0, |Q|,|U|,|V| beyond I); a failing pixel is left out of all three passes, counted by reason
// and named in a warning; a cube with no usable pixel is an error.
// Correction (the inverse of X): I' = I, V' = V - a_V I, Q' = Q - a_Q I - b_Q V', U' = U - a_U I - b_U V'.
#pragma once

#include <string>
#include <utility>
#include <vector>

#include <Eigen/Dense>

#include "zeeline/io/cube_reader.hpp"

namespace zeeline::polarimetry {

struct CrosstalkOptions {
  std::vector<std::pair<double, double>> continuum_ranges_nm;  ///< empty = from the mean I profile
  double continuum_depth_fraction = 0.002;  ///< (0, 0.5)
  double strong_v_sigma = 5.0;              ///< > 0
  int min_continuum_samples = 2;            ///< wavelengths, >= 1
  int min_strong_v_samples = 20;            ///< samples (pixel x wavelength), >= 3

  std::string Validate() const;
};

struct CrosstalkResult {
  double i_to_q = 0.0, i_to_u = 0.0, i_to_v = 0.0, v_to_q = 0.0, v_to_u = 0.0;
  double i_to_q_err = 0.0, i_to_u_err = 0.0, i_to_v_err = 0.0, v_to_q_err = 0.0, v_to_u_err = 0.0;
  std::vector<double> continuum_wavelengths_nm;
  bool continuum_automatic = true;
  long long continuum_samples = 0;  ///< pixel x wavelength samples used for a
  long long strong_v_samples = 0;   ///< samples used for b
  double v_noise = 0.0;             ///< sigma_V (data units)
  bool v_estimated = false;         ///< b coefficients available
  long long rejected_pixels = 0;    ///< pixels left out of every sum by the data-sanity check
  long long rejected_by_bit[32] = {};  ///< of those, how many failed each QUALITY test (io/quality_flags.hpp)
  std::vector<std::string> warnings;

  /// The correction as a 4 x 4 matrix acting on (I, Q, U, V) (NaN b treated as 0).
  Eigen::Matrix4d CorrectionMatrix() const;
};

/// Reads the cube (all of I, Q, U, V required; CalibrationError otherwise) in tiles, three passes.
CrosstalkResult EstimateCrosstalk(CubeReader& reader, const CrosstalkOptions& options = {});

}  // namespace zeeline::polarimetry
