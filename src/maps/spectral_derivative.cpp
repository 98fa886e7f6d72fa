#include "zeeline/maps/spectral_derivative.hpp"

#include <algorithm>
#include <cmath>

namespace zeeline {
namespace {

using Point = DerivativeStencil::Point;

bool UniformAround(const double* x, std::size_t i) {
  const double h = x[i + 1] - x[i];
  const double tol = 1e-6 * std::fabs(h);
  return std::fabs((x[i] - x[i - 1]) - h) < tol && std::fabs((x[i + 2] - x[i + 1]) - h) < tol &&
         std::fabs((x[i - 1] - x[i - 2]) - h) < tol;
}

// A grid whose every step is within 0.4e-6 of the first passes UniformAround at every sample (two steps then
// differ by < 0.8e-6 h0 <= 1e-6 |h|): one check per grid instead of one per sample; the per-sample formulas
// are unchanged.
bool UniformGrid(const double* x, std::size_t n) {
  const double h0 = x[1] - x[0];
  bool uniform = n >= 5;
  for (std::size_t i = 1; uniform && i + 1 < n; ++i) uniform = std::fabs((x[i + 1] - x[i]) - h0) < 0.4e-6 * std::fabs(h0);
  return uniform;
}

// The weights of sample i (n >= 3). Five-point: den1 = 12 h, den2 = 12 h^2. Three-point (Fornberg 1988) at
// x1 from (x0, x1, x2), a = x1 - x0, b = x2 - x1:
//   f' = (-b / (a (a + b))) f0 + ((b - a) / (a b)) f1 + (a / (b (a + b))) f2,
//   f'' = 2 (f0 / (a (a + b)) - f1 / (a b) + f2 / (b (a + b))).
// Ends: the three-point polynomial through the first (last) three samples, evaluated at the end.
Point PointAt(const double* x, std::size_t n, std::size_t i, bool uniform, double& den1, double& den2) {
  Point p;
  if (i >= 1 && i + 1 < n) {
    if (i >= 2 && i + 2 < n && (uniform || UniformAround(x, i))) {
      const double h = x[i + 1] - x[i];
      den1 = 12.0 * h;
      den2 = 12.0 * h * h;
      return p;
    }
    p.kind = 1;
    p.j0 = i - 1;
    const double a = x[i] - x[i - 1], b = x[i + 1] - x[i];
    p.c1[0] = -b / (a * (a + b));
    p.c1[1] = (b - a) / (a * b);
    p.c1[2] = a / (b * (a + b));
    p.c2[0] = a * (a + b);
    p.c2[1] = a * b;
    p.c2[2] = b * (a + b);
    return p;
  }
  p.kind = 2;
  p.j0 = i == 0 ? 0 : n - 3;
  const double x0 = x[p.j0], x1 = x[p.j0 + 1], x2 = x[p.j0 + 2], at = x[i];
  p.c1[0] = (at - x1) + (at - x2);
  p.c1[1] = (at - x0) + (at - x2);
  p.c1[2] = (at - x0) + (at - x1);
  p.d1[0] = p.c2[0] = (x0 - x1) * (x0 - x2);
  p.d1[1] = p.c2[1] = (x1 - x0) * (x1 - x2);
  p.d1[2] = p.c2[2] = (x2 - x0) * (x2 - x1);
  return p;
}

double FivePointFirst(const double* f, std::size_t i, double den1) {
  return (-f[i + 2] + 8.0 * f[i + 1] - 8.0 * f[i - 1] + f[i - 2]) / den1;
}
double FivePointSecond(const double* f, std::size_t i, double den2) {
  return (-f[i + 2] + 16.0 * f[i + 1] - 30.0 * f[i] + 16.0 * f[i - 1] - f[i - 2]) / den2;
}

double Apply(const Point& p, const double* f, std::size_t i, int order, double den1, double den2) {
  const std::size_t j = p.j0;
  switch (p.kind) {
    case 0: return order == 1 ? FivePointFirst(f, i, den1) : FivePointSecond(f, i, den2);
    case 1:
      if (order == 1) return p.c1[0] * f[j] + p.c1[1] * f[j + 1] + p.c1[2] * f[j + 2];
      return 2.0 * (f[j] / p.c2[0] - f[j + 1] / p.c2[1] + f[j + 2] / p.c2[2]);
    default:
      if (order == 1)
        return f[j] * p.c1[0] / p.d1[0] + f[j + 1] * p.c1[1] / p.d1[1] + f[j + 2] * p.c1[2] / p.d1[2];
      return 2.0 * (f[j] / p.c2[0] + f[j + 1] / p.c2[1] + f[j + 2] / p.c2[2]);
  }
}

void Derivative(const double* x, const double* f, std::size_t n, double* out, int order) {
  if (n < 3) {
    for (std::size_t i = 0; i < n; ++i) out[i] = std::nan("");
    return;
  }
  const bool uniform = UniformGrid(x, n);
  for (std::size_t i = 0; i < n; ++i) {
    double den1 = 0.0, den2 = 0.0;
    const Point p = PointAt(x, n, i, uniform, den1, den2);
    out[i] = Apply(p, f, i, order, den1, den2);
  }
}

}  // namespace

void FirstDerivative(const double* x, const double* f, std::size_t n, double* out) { Derivative(x, f, n, out, 1); }
void SecondDerivative(const double* x, const double* f, std::size_t n, double* out) { Derivative(x, f, n, out, 2); }

void DerivativeStencil::Prepare(const double* x, std::size_t n) {
  n_ = n;
  five_begin_ = five_end_ = 0;
  points_.resize(n);
  den1_.assign(n, 1.0);
  den2_.assign(n, 1.0);
  if (n < 3) return;
  const bool uniform = UniformGrid(x, n);
  bool all_five = n >= 5;
  for (std::size_t i = 0; i < n; ++i) {
    points_[i] = PointAt(x, n, i, uniform, den1_[i], den2_[i]);
    if (i >= 2 && i + 2 < n && points_[i].kind != 0) all_five = false;
  }
  if (all_five) {
    five_begin_ = 2;
    five_end_ = n - 2;
  }
}

template <class Edge, class Five>
void DerivativeStencil::ForEachSample(std::size_t begin, std::size_t end, Edge edge, Five five) const {
  // Samples outside the five-point run: [0, five_begin) and [five_end, n) (all of them when the run is empty).
  const std::size_t head = five_end_ > five_begin_ ? five_begin_ : n_;
  for (std::size_t i = begin; i < std::min(end, head); ++i) edge(i);
  for (std::size_t i = std::max(begin, std::max(head, five_end_)); i < end; ++i) edge(i);
  const std::size_t lo = std::max(begin, five_begin_), hi = std::min(end, five_end_);
  if (lo < hi) five(lo, hi);
}

template <int kOrder>
void DerivativeStencil::Run(const double* f, double* out, std::size_t begin, std::size_t end) const {
  if (n_ < 3) {
    for (std::size_t i = begin; i < end; ++i) out[i] = std::nan("");
    return;
  }
  ForEachSample(
      begin, end, [&](std::size_t i) { out[i] = Apply(points_[i], f, i, kOrder, den1_[i], den2_[i]); },
      [&](std::size_t lo, std::size_t hi) {
        const double* den = kOrder == 1 ? den1_.data() : den2_.data();
        for (std::size_t i = lo; i < hi; ++i)
          out[i] = kOrder == 1 ? FivePointFirst(f, i, den[i]) : FivePointSecond(f, i, den[i]);
      });
}

void DerivativeStencil::First(const double* f, double* out) const { Run<1>(f, out, 0, n_); }
void DerivativeStencil::Second(const double* f, double* out) const { Run<2>(f, out, 0, n_); }
void DerivativeStencil::First(const double* f, double* out, std::size_t begin, std::size_t end) const {
  Run<1>(f, out, begin, end);
}

void DerivativeStencil::FirstAndSecond(const double* f, double* first, double* second) const {
  FirstAndSecond(f, first, second, 0, n_);
}

void DerivativeStencil::FirstAndSecond(const double* f, double* first, double* second, std::size_t begin,
                                       std::size_t end) const {
  if (n_ < 3) {
    for (std::size_t i = begin; i < end; ++i) first[i] = second[i] = std::nan("");
    return;
  }
  ForEachSample(
      begin, end,
      [&](std::size_t i) {
        first[i] = Apply(points_[i], f, i, 1, den1_[i], den2_[i]);
        second[i] = Apply(points_[i], f, i, 2, den1_[i], den2_[i]);
      },
      [&](std::size_t lo, std::size_t hi) {
        const double* const den1 = den1_.data();
        const double* const den2 = den2_.data();
        for (std::size_t i = lo; i < hi; ++i) {
          first[i] = FivePointFirst(f, i, den1[i]);
          second[i] = FivePointSecond(f, i, den2[i]);
        }
      });
}

}  // namespace zeeline
