// zeeline/maps/field_vector.hpp -- |B| and inclination, with honest errors, from B_LOS and B_T.
//
//   |B| = hypot(B_LOS, B_T),   inclination = atan2(B_T, B_LOS) in [0, 180) deg (docs/conventions.md).
// B_T from the weak-field fit is a debiased, non-negative length (weak_field.hpp) whose noise is Gaussian in
// B_T^2 (sigma_sq), not in B_T; at low signal |B| and the inclination are strongly skewed functions of it, and
// linear propagation (which drops the B_T term entirely at B_T = 0) understates their spread. So each error
// here is a quarter of the spread of the quantity over the 2-sigma ranges
//   B_T^2 in [max(B_T^2 - 2 sigma_sq, 0), B_T^2 + 2 sigma_sq],   |B_LOS| in [max(|B_LOS| - 2 sigma_L, 0), |B_LOS| + 2 sigma_L]
// (added in quadrature), which equals linear propagation when both are well measured. Without sigma_sq
// (B_T from another method) the B_T range is B_T -+ 2 sigma_T, clamped at 0.
#pragma once

namespace zeeline {

struct FieldVector {
  double field_gauss = 0.0, field_err_gauss = 0.0;
  double inclination_deg = 0.0, inclination_err_deg = 0.0;  ///< NaN when |B| = 0
};

/// `btrans_sq_err_gauss2` <= 0: not known (use btrans_err_gauss).
FieldVector ComposeFieldVector(double blos_gauss, double blos_err_gauss, double btrans_gauss, double btrans_err_gauss,
                               double btrans_sq_err_gauss2);

}  // namespace zeeline
