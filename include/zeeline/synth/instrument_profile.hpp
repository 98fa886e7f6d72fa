// zeeline/synth/instrument_profile.hpp -- convolution of spectra (and their derivatives) with an
// instrument profile and/or a Gaussian macroturbulence, by FFT (FFTW r2c / c2r).
//
//   out(lambda) = Int K(lambda - lambda') in(lambda') dlambda',   Int K = 1
// on a uniform grid of n points and step h (nm). K is the product, in Fourier space, of
//   * a Gaussian of FWHM Gamma:  transfer T(f) = exp(-2 pi^2 sigma^2 f^2), sigma = Gamma / (2 sqrt(2 ln 2))
//     (used analytically, so kernels narrower than h are still exact for band-limited data), and
//   * an optional tabulated response R(offset_nm) (linear interpolation onto the grid, zero outside the
//     table, renormalised to unit sum; its centre is offset 0).
// Two Gaussians combine as one with FWHM sqrt(G1^2 + G2^2) (widths add in quadrature).
// Macroturbulence with 1/e velocity half-width v_mac: Gaussian of FWHM 2 sqrt(ln 2) lambda0 v_mac / c.
//
// Edges: the data are extended by their end values (constant extension) over a pad of at least the kernel
// half-extent (4 FWHM of the Gaussian plus the table half-width) on each side, so the circular FFT
// convolution never wraps one end onto the other. Plans and aligned buffers are created once in the
// constructor (FFTW_ESTIMATE; plan creation is serialised by a mutex because the FFTW planner is not
// thread-safe); Apply is allocation-free. One convolver per thread (Apply uses the owned buffers).
#pragma once

#include <memory>
#include <string>
#include <vector>

#include <Eigen/Core>

#include "zeeline/synth/me_parameters.hpp"

namespace zeeline {

struct InstrumentProfileOptions {
  double gaussian_fwhm_nm = 0.0;       ///< 0 = no Gaussian factor
  std::vector<double> table_offset_nm;  ///< tabulated response: offsets from the profile centre, ascending
  std::vector<double> table_response;   ///< response at those offsets (any normalisation, >= 0)

  std::string Validate() const;
  bool IsIdentity() const { return gaussian_fwhm_nm == 0.0 && table_offset_nm.empty(); }
};

/// FWHM (nm) of the Gaussian broadening by a macroturbulence of 1/e half-width vmac_kms at wavelength_nm.
double MacroturbulenceFwhm_nm(double wavelength_nm, double vmac_kms);

/// Owns FFTW plans and buffers for one grid length and one kernel.
class ProfileConvolver {
 public:
  /// Throws OptionError for bad options (named field), n_points < 2 or step_nm <= 0.
  ProfileConvolver(int n_points, double step_nm, const InstrumentProfileOptions& options);
  ~ProfileConvolver();
  ProfileConvolver(ProfileConvolver&&) noexcept;
  ProfileConvolver& operator=(ProfileConvolver&&) noexcept;
  ProfileConvolver(const ProfileConvolver&) = delete;
  ProfileConvolver& operator=(const ProfileConvolver&) = delete;

  int size() const;          ///< n_points
  int fft_length() const;    ///< padded transform length
  bool is_identity() const;  ///< no kernel: Apply leaves the data unchanged

  /// Convolve one spectrum of size() samples in place.
  void Apply(Eigen::Ref<Eigen::ArrayXd> values);
  /// Convolve each Stokes column.
  void Apply(StokesArray& stokes);
  /// Convolve every derivative (convolution is linear and parameter-independent).
  void Apply(StokesJacobian& jacobian);

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace zeeline
