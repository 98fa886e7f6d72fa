#include "zeeline/maps/spectral_derivative.hpp"

#include <cmath>

namespace zeeline {
namespace {

bool UniformAround(const double* x, std::size_t i) {
  const double h = x[i + 1] - x[i];
  const double tol = 1e-6 * std::fabs(h);
  return std::fabs((x[i] - x[i - 1]) - h) < tol && std::fabs((x[i + 2] - x[i + 1]) - h) < tol &&
         std::fabs((x[i - 1] - x[i - 2]) - h) < tol;
}

// Three-point weights for the first and second derivative at x1 from (x0, x1, x2) (Fornberg 1988).
void ThreePoint(double x0, double x1, double x2, double f0, double f1, double f2, double* d1, double* d2) {
  const double a = x1 - x0, b = x2 - x1;
  if (d1) *d1 = (-b / (a * (a + b))) * f0 + ((b - a) / (a * b)) * f1 + (a / (b * (a + b))) * f2;
  if (d2) *d2 = 2.0 * (f0 / (a * (a + b)) - f1 / (a * b) + f2 / (b * (a + b)));
}

void Derivative(const double* x, const double* f, std::size_t n, double* out, int order) {
  if (n < 3) {
    for (std::size_t i = 0; i < n; ++i) out[i] = std::nan("");
    return;
  }
  // A grid whose every step is within 0.4e-6 of the first passes UniformAround at every sample (two steps
  // then differ by < 0.8e-6 h0 <= 1e-6 |h|): one check per call instead of one per sample (the map runs
  // this twice per pixel on the same grid); the per-sample formulas are unchanged.
  const double h0 = x[1] - x[0];
  bool uniform = n >= 5;
  for (std::size_t i = 1; uniform && i + 1 < n; ++i) uniform = std::fabs((x[i + 1] - x[i]) - h0) < 0.4e-6 * std::fabs(h0);
  for (std::size_t i = 1; i + 1 < n; ++i) {
    if (i >= 2 && i + 2 < n && (uniform || UniformAround(x, i))) {
      const double h = x[i + 1] - x[i];
      if (order == 1)
        out[i] = (-f[i + 2] + 8.0 * f[i + 1] - 8.0 * f[i - 1] + f[i - 2]) / (12.0 * h);
      else
        out[i] = (-f[i + 2] + 16.0 * f[i + 1] - 30.0 * f[i] + 16.0 * f[i - 1] - f[i - 2]) / (12.0 * h * h);
    } else {
      double d1, d2;
      ThreePoint(x[i - 1], x[i], x[i + 1], f[i - 1], f[i], f[i + 1], &d1, &d2);
      out[i] = order == 1 ? d1 : d2;
    }
  }
  // Ends: the three-point polynomial through the first (last) three samples, evaluated at the end.
  auto end_value = [&](std::size_t a, std::size_t b, std::size_t c, double at) {
    const double x0 = x[a], x1 = x[b], x2 = x[c];
    if (order == 2) return 2.0 * (f[a] / ((x0 - x1) * (x0 - x2)) + f[b] / ((x1 - x0) * (x1 - x2)) +
                                  f[c] / ((x2 - x0) * (x2 - x1)));
    return f[a] * ((at - x1) + (at - x2)) / ((x0 - x1) * (x0 - x2)) +
           f[b] * ((at - x0) + (at - x2)) / ((x1 - x0) * (x1 - x2)) +
           f[c] * ((at - x0) + (at - x1)) / ((x2 - x0) * (x2 - x1));
  };
  out[0] = end_value(0, 1, 2, x[0]);
  out[n - 1] = end_value(n - 3, n - 2, n - 1, x[n - 1]);
}

}  // namespace

void FirstDerivative(const double* x, const double* f, std::size_t n, double* out) { Derivative(x, f, n, out, 1); }
void SecondDerivative(const double* x, const double* f, std::size_t n, double* out) { Derivative(x, f, n, out, 2); }

}  // namespace zeeline
