// zeeline/maps/disambiguation.hpp -- resolving the 180-degree azimuth ambiguity by the acute-angle method
// against a potential field computed from B_LOS by FFT.
//
// Potential field (Alissandrakis 1981, A&A 100, 197; Gary 1989, ApJS 69, 323; from memory). Above the
// plane z = 0 (z toward the observer, docs/conventions.md) a current-free field is B = -grad(phi) with
// laplacian(phi) = 0. With the 2-D Fourier transform f^(k) = sum_x f(x) exp(-i k.x) (FFTW's forward sign),
// the solution decaying for z -> +inf is phi^(k, z) = phi0^(k) exp(-|k| z), so
//   Bz^ = -d(phi^)/dz = |k| phi0^          at z = 0,
//   Bx^ = -i kx phi0^ = -i kx / |k| Bz^,   By^ = -i ky / |k| Bz^
// (d/dx -> +i kx under this transform). The k = 0 term (net flux) gets no transverse field. The B_LOS map
// (NaN -> 0) is zero-padded to twice its size in x and y before the transform, so the periodic images of
// the field of view are one field of view away; the transverse field is then read on the original pixels.
// Sign check: for a positive pole next to a negative one, Bx^p points from the positive to the negative
// pole (tests/maps/disambiguation_test.cpp compares with the closed-form field of buried monopoles).
//
// Acute-angle rule: of the two azimuths chi and chi + 180 allowed by the Zeeman linear polarisation, keep
// the one whose transverse direction (cos chi, sin chi) makes an angle < 90 deg with (Bx^p, By^p).
// Optional smoothness passes: a pixel whose transverse vector points against the B_TRANS-weighted sum of its
// 8 neighbours' vectors (dot product < 0) is flipped; repeated `smoothing_passes` times.
//
// Output: B_AZIM in [0, 360) after disambiguation (before it, [0, 180)); a flag per pixel
// (DisambiguationFlag). Every pixel with a finite azimuth gets a choice; pixels with B_TRANS below
// min_btrans_sigma x B_TRANS_SIGMA are flagged kDisambigWeak (the choice is a guess there).
// Limits: planar geometry (disc centre or small fields of view: B_LOS is taken as the vertical field and the
// image plane as the horizontal plane); the potential field is a poor guide where currents are strong
// (sheared neutral lines, sunspot penumbrae far from potential) and where B_LOS is noise-dominated; flux
// outside the field of view is ignored. Strong-transverse-field pixels only should be trusted.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

namespace zeeline {

enum DisambiguationFlag : std::int16_t {
  kDisambigNone = 0,      ///< no azimuth (NaN input): left NaN
  kDisambigAcute = 1,     ///< acute-angle choice, B_TRANS above min_btrans_sigma x error
  kDisambigWeak = 2,      ///< acute-angle choice on a weak transverse field (unreliable)
  kDisambigSmoothed = 3,  ///< flipped by a smoothness pass
};

struct DisambiguationOptions {
  double min_btrans_sigma = 3.0;  ///< B_TRANS / B_TRANS_SIGMA below which a pixel is kDisambigWeak, >= 0
  int smoothing_passes = 0;       ///< 0..20 neighbour-consistency passes after the acute-angle choice

  std::string Validate() const;
};

/// Transverse potential field (Bx, By) at z = 0 from the vertical field `bz` (nx*ny, y-major, NaN -> 0),
/// same units as bz. Throws OptionError for sizes < 2 or mismatched vectors.
void PotentialTransverseField(long nx, long ny, const std::vector<double>& bz, std::vector<double>& bx,
                              std::vector<double>& by);

/// Disambiguates `azimuth_deg` in place ([0, 180) in, [0, 360) out) and fills `flags` (nx*ny).
/// `btrans_err` may be empty (then no pixel is kDisambigWeak). Throws OptionError for invalid options or
/// sizes.
void DisambiguateAzimuth(long nx, long ny, const std::vector<float>& blos_gauss, const std::vector<float>& btrans_gauss,
                         const std::vector<float>& btrans_err_gauss, std::vector<float>& azimuth_deg,
                         std::vector<std::int16_t>& flags, const DisambiguationOptions& options = {});

/// The smoothness passes alone (used by DisambiguateAzimuth): flips pixels (flags != kDisambigNone) whose
/// transverse vector points against the B_TRANS-weighted sum of their 8 neighbours'; at most `passes`
/// passes, stopping early when none flips. Sets kDisambigSmoothed on flipped pixels; returns the number of
/// flips. Throws OptionError for mismatched sizes.
long SmoothAzimuth(long nx, long ny, const std::vector<float>& btrans_gauss, std::vector<float>& azimuth_deg,
                   std::vector<std::int16_t>& flags, int passes);

}  // namespace zeeline
