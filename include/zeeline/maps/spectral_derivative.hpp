// zeeline/maps/spectral_derivative.hpp -- first and second wavelength derivatives of a sampled spectrum.
//
// Method: central finite differences of fourth order on a uniform grid,
//   f'(x)  ~ [-f(x+2h) + 8 f(x+h) - 8 f(x-h) + f(x-2h)] / (12 h)
//   f''(x) ~ [-f(x+2h) + 16 f(x+h) - 30 f(x) + 16 f(x-h) - f(x-2h)] / (12 h^2)
// (Abramowitz & Stegun 1964, 25.3.6 and 25.3.24), falling back to the second-order three-point formulas
// on a non-uniform grid (Fornberg 1988 weights for three points) and at the two samples next to each end;
// the end samples themselves use one-sided second-order formulas. Truncation error O(h^4) keeps the bias
// far below the noise for a line sampled at >= 2 points per Doppler width, and the white-noise gain of the
// first-derivative stencil is sqrt(130)/12 = 0.950/h (vs 0.707/h for the three-point formula), so noise
// in I is not amplified much; the weak-field error bars include it (NoiseGainFirst).
// We use finite differences rather than an FFT derivative because spectra are short, not periodic and
// often irregularly sampled; an FFT derivative would need apodisation that biases the line wings.
//
// DerivativeStencil holds the per-sample weights of both derivatives for one wavelength grid, worked out
// once (a map applies them to every pixel of a cube on the same grid); applying it gives bit for bit what
// FirstDerivative / SecondDerivative give, which are built on the same per-sample weights, and its inner loop
// over a uniform grid is a plain loop the compiler vectorises.
#pragma once

#include <cstddef>
#include <vector>

namespace zeeline {

/// d f / d lambda into `out` (length n >= 3). `x` strictly increasing.
void FirstDerivative(const double* x, const double* f, std::size_t n, double* out);
/// d^2 f / d lambda^2 into `out` (length n >= 3).
void SecondDerivative(const double* x, const double* f, std::size_t n, double* out);

/// The weights of both derivatives at every sample of one grid x[0..n) (n >= 3), for many spectra f on it.
class DerivativeStencil {
 public:
  /// How one sample's derivative is formed from f (the formulas of the file comment).
  struct Point {
    int kind = 0;                 ///< 0: five-point, 1: three-point, 2: end (polynomial through 3 samples)
    std::size_t j0 = 0;           ///< first of the three samples (kinds 1 and 2)
    double c1[3] = {0, 0, 0};     ///< first derivative: weights / numerators
    double d1[3] = {1, 1, 1};     ///< first derivative: denominators (end samples)
    double c2[3] = {1, 1, 1};     ///< second derivative: denominators
  };

  DerivativeStencil() = default;
  DerivativeStencil(const double* x, std::size_t n) { Prepare(x, n); }
  /// Works out the weights for x[0..n) (reuses the buffers: no allocation once they are large enough).
  void Prepare(const double* x, std::size_t n);
  std::size_t size() const { return n_; }
  /// d f / d lambda and d^2 f / d lambda^2 of f[0..n) into out[0..n).
  void First(const double* f, double* out) const;
  void Second(const double* f, double* out) const;
  /// Both in one pass over f (the same values as First and Second).
  void FirstAndSecond(const double* f, double* first, double* second) const;
  /// The same for the samples [begin, end) alone (end <= size()): out[i] for i outside is not written. A caller
  /// that needs a window of the grid, the stencil prepared on the window and two samples either side, skips
  /// the ends it does not use.
  void First(const double* f, double* out, std::size_t begin, std::size_t end) const;
  void FirstAndSecond(const double* f, double* first, double* second, std::size_t begin, std::size_t end) const;

 private:
  template <int kOrder>
  void Run(const double* f, double* out, std::size_t begin, std::size_t end) const;  // First (1), Second (2)
  // edge(i) for each sample of [begin, end) outside the five-point run, five(lo, hi) for those inside it.
  template <class Edge, class Five>
  void ForEachSample(std::size_t begin, std::size_t end, Edge edge, Five five) const;
  std::size_t n_ = 0;
  std::size_t five_begin_ = 0, five_end_ = 0;  ///< [begin, end): every sample five-point (the fast loop)
  std::vector<double> den1_, den2_;            ///< five-point denominators 12 h and 12 h^2 per sample
  std::vector<Point> points_;                  ///< every sample (those outside the fast loop are used)
};

/// White-noise gain of FirstDerivative at an interior sample of a uniform grid of step h: sigma_f' / sigma_f.
inline double NoiseGainFirst(double h) { return 0.9501461875825213 / h; }  // sqrt(130)/12
/// Same for SecondDerivative: sqrt(1 + 256 + 900 + 256 + 1)/12 / h^2 = sqrt(1414)/12 / h^2.
inline double NoiseGainSecond(double h) { return 3.1336288815095513 / (h * h); }

}  // namespace zeeline
