// First and second wavelength derivatives (spectral_derivative.hpp) against the exact derivatives of
// polynomials the stencils reproduce: the five-point formulas of Abramowitz & Stegun (1964) 25.3.6 and
// 25.3.24 are exact for polynomials of degree <= 4, the three-point and end formulas for degree <= 2
// (Taylor expansion; textbook).
#include <cmath>
#include <vector>

#include <gtest/gtest.h>

#include "common/expect_close.hpp"
#include "zeeline/maps/spectral_derivative.hpp"

namespace zeeline {
namespace {

// Exact up to rounding: the stencils divide differences of O(1) values by 12 h (h ~ 1e-3) or 12 h^2, so the
// rounding of f (~1e-16) becomes ~1e-13 in f' and ~1e-10 in f''.
constexpr double kFirstAbsTol = 1e-9;
constexpr double kSecondAbsTol = 1e-5;

std::vector<double> UniformGrid(std::size_t n, double x0, double h) {
  std::vector<double> x(n);
  for (std::size_t i = 0; i < n; ++i) x[i] = x0 + h * static_cast<double>(i);
  return x;
}

TEST(SpectralDerivative, FivePointStencilsAreExactForAQuarticInside) {
  const std::vector<double> x = UniformGrid(40, 0.98, 1e-3);
  std::vector<double> f, d1(x.size()), d2(x.size());
  for (double xi : x) f.push_back(xi * xi * xi * xi - 2.0 * xi * xi * xi + 0.5 * xi);  // x^4 - 2 x^3 + x/2
  const DerivativeStencil st(x.data(), x.size());
  st.FirstAndSecond(f.data(), d1.data(), d2.data());
  for (std::size_t i = 2; i + 2 < x.size(); ++i) {
    const double xi = x[i];
    EXPECT_CLOSE(d1[i], 4.0 * xi * xi * xi - 6.0 * xi * xi + 0.5, 0.0, kFirstAbsTol) << i;
    EXPECT_CLOSE(d2[i], 12.0 * xi * xi - 12.0 * xi, 0.0, kSecondAbsTol) << i;
  }
}

TEST(SpectralDerivative, EveryStencilIsExactForAQuadraticOnAnIrregularGrid) {
  std::vector<double> x = {0.0};
  for (int i = 1; i < 30; ++i) x.push_back(x.back() + 1e-3 * (1.0 + 0.3 * std::sin(1.7 * i)));  // steps 0.7-1.3e-3
  std::vector<double> f, d1(x.size()), d2(x.size()), e1(x.size()), e2(x.size());
  for (double xi : x) f.push_back(3.0 * xi * xi - 2.0 * xi + 1.0);
  const DerivativeStencil st(x.data(), x.size());
  st.FirstAndSecond(f.data(), d1.data(), d2.data());
  FirstDerivative(x.data(), f.data(), x.size(), e1.data());
  SecondDerivative(x.data(), f.data(), x.size(), e2.data());
  for (std::size_t i = 0; i < x.size(); ++i) {
    EXPECT_CLOSE(d1[i], 6.0 * x[i] - 2.0, 0.0, kFirstAbsTol) << i;
    EXPECT_CLOSE(d2[i], 6.0, 0.0, kSecondAbsTol) << i;
    EXPECT_EQ(d1[i], e1[i]) << i;  // the stencil is the same arithmetic as the one-off functions (header)
    EXPECT_EQ(d2[i], e2[i]) << i;
  }
}

TEST(SpectralDerivative, FirstAndSecondInOnePassEqualsEachAlone) {
  const std::vector<double> x = UniformGrid(60, 630.2, 1.5e-3);
  std::vector<double> f, d1(x.size()), d2(x.size()), e1(x.size()), e2(x.size());
  for (double xi : x) f.push_back(1.0 - 0.6 * std::exp(-(xi - 630.25) * (xi - 630.25) / 1.6e-5));
  const DerivativeStencil st(x.data(), x.size());
  st.FirstAndSecond(f.data(), d1.data(), d2.data());
  st.First(f.data(), e1.data());
  st.Second(f.data(), e2.data());
  for (std::size_t i = 0; i < x.size(); ++i) {
    EXPECT_EQ(d1[i], e1[i]) << i;
    EXPECT_EQ(d2[i], e2[i]) << i;
  }
}

TEST(SpectralDerivative, ARangeOfSamplesIsThoseOfTheWholeGridAndNothingElse) {
  std::vector<double> x = {0.0};
  for (int i = 1; i < 30; ++i) x.push_back(x.back() + 1e-3 * (1.0 + 0.3 * std::sin(1.7 * i)));  // all kinds of point
  std::vector<double> u = UniformGrid(30, 630.2, 1.5e-3);  // the five-point run
  for (const std::vector<double>* grid : {&x, &u}) {
    std::vector<double> f, d1(30), d2(30);
    for (double xi : *grid) f.push_back(std::exp(-(xi - (*grid)[12]) * (xi - (*grid)[12]) / 1e-4));
    const DerivativeStencil st(grid->data(), grid->size());
    st.FirstAndSecond(f.data(), d1.data(), d2.data());
    for (std::size_t begin : {0, 1, 2, 5}) {
      const std::size_t end = 30 - begin / 2;
      std::vector<double> r1(30, -7.0), r2(30, -7.0), o1(30, -7.0);
      st.FirstAndSecond(f.data(), r1.data(), r2.data(), begin, end);
      st.First(f.data(), o1.data(), begin, end);
      for (std::size_t i = 0; i < 30; ++i) {
        const bool in = i >= begin && i < end;
        EXPECT_EQ(r1[i], in ? d1[i] : -7.0) << begin << " " << i;
        EXPECT_EQ(r2[i], in ? d2[i] : -7.0) << begin << " " << i;
        EXPECT_EQ(o1[i], in ? d1[i] : -7.0) << begin << " " << i;
      }
    }
  }
}

}  // namespace
}  // namespace zeeline
