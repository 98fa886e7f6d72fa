// zeeline/maps/weak_field_regime.hpp -- is the weak-field answer trustworthy for this spectrum? One decision shared by
// `zeeline map` (method auto, and the validity flag of method wfa) and `zeeline measure` (the wfa verdict).
//
// The test must not trust the quantity it tests: the weak-field transverse field saturates for strong
// fields and the second moment of a saturated line overstates its Doppler width, both of which would call
// a strong field weak. So the decision uses
//   1. a strength scale B* = hypot(max(|B_LOS,wfa|, |B_LOS,cog|), B_T) where the centre-of-gravity B_LOS is
//      valid at any field strength (Rees & Semel 1979) and B_T is the saturation-corrected, noise-debiased
//      weak-field value (weak_field.hpp);
//   2. the Doppler width w of the line from the shape of its core, which saturation does not inflate
//      (line_core.hpp), and the splitting ratio r = |g_eff| C B* / w (C: Lorentz unit per gauss);
//      weak when r < weak_ratio. LL04 sect. 9.6 asks g_eff Delta lambda_B << Delta lambda_D; the default
//      0.15 keeps the weak-field B_LOS bias below 2 % (it grows as r^2: +6 % at r = 0.26 on the thin-line
//      model, tests/maps/field_maps_test.cpp);
//   3. the shape test: the weak-field model must describe the observed profiles. The reduced chi2 of V
//      against -C g_eff B_LOS dI/dl, and of Q, U against the transverse model, must not exceed
//      1 + consistency_sigma * sqrt(2 / dof + 2 / dof_noise): the chi2 is scaled by a noise variance
//      estimated from the continuum's second differences (dof_noise: NoiseDegreesOfFreedom, pixel_spectrum.hpp),
//      so it scatters like an F(dof, dof_noise) variable around 1 with that relative variance (normal
//      approximation). A field beyond the weak regime separates the V lobes and reshapes Q, U
//      whatever the line's saturation, so this catches what r misses when the strength scale is
//      underestimated.
// A pixel passes when 2 and 3 hold. Measured thresholds and counts: docs/methods.md.
#pragma once

#include <string>

#include "zeeline/maps/centre_of_gravity.hpp"
#include "zeeline/maps/full_splitting.hpp"
#include "zeeline/maps/map_method.hpp"
#include "zeeline/maps/weak_field.hpp"

namespace zeeline {

struct WeakFieldRegimeOptions {
  double weak_ratio = kDefaultWeakRatio;  ///< r below which the weak-field answer may be used (map_method.hpp)
  double consistency_sigma = 5.0;  ///< chi2 excess (in its standard deviations) that rejects the model
  double saturated_above = 1.0;    ///< saturation index u above which the textbook transverse forms are biased
                                   ///< (measured: -11 % at eta0 = 3, where u comes out ~1.8; docs/methods.md)
  bool explain = true;             ///< fill WeakFieldRegime::reason (maps skip it: formatting costs ~5 % of a wfa map)

  std::string Validate() const;
};

struct WeakFieldRegime {
  double strength_gauss = 0.0;   ///< B*
  double width_nm = 0.0;         ///< Doppler 1/e half-width used in r
  double ratio = 0.0;            ///< r = |g_eff| C B* / w (NaN when no width could be measured)
  double saturation = 0.0;       ///< u of line_core.hpp
  bool ratio_ok = false;         ///< r < weak_ratio
  bool v_consistent = true;      ///< V described by the weak-field model (true when not testable)
  bool qu_consistent = true;     ///< Q, U described by the transverse model (true when not testable)
  bool saturated_textbook = false;  ///< a textbook transverse form (whole/core) on a saturated line
  bool weak = false;             ///< ratio_ok && v_consistent && qu_consistent
  std::string reason;            ///< one phrase: why weak / why not
};

/// `cog` may be null (no V). `fallback_width_nm` is used when the core shape could not be measured.
WeakFieldRegime AssessWeakFieldRegime(const WeakFieldResult& wfa, const CentreOfGravityResult* cog, double g_eff,
                              double rest_wavelength_nm, TransverseRegion transverse, double fallback_width_nm,
                              const WeakFieldRegimeOptions& options);

/// Can the three-Gaussian split (full_splitting.hpp) be trusted for this spectrum? Valid when its sigma groups
/// are resolved (full_splitting.hpp: separation, significance and a dip at each sigma group) and |B| is not
/// below the centre-of-gravity |B_LOS| by more than 3 sigma (else `inconsistent`: the two cannot both hold).
/// The reason names the test that failed with its numbers, so a verdict never contradicts what is printed.
struct SplitCheck {
  bool valid = false;
  bool resolved = false;
  bool inconsistent = false;
  std::string reason;  ///< one phrase with the numbers it compares
};
SplitCheck CheckSplit(const SplittingResult& split, const CentreOfGravityResult* cog, double resolution_ratio);

}  // namespace zeeline
