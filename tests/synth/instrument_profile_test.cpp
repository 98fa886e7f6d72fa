// FFT convolution with Gaussian and tabulated instrument profiles.
#include "zeeline/synth/instrument_profile.hpp"

#include <cmath>

#include <gtest/gtest.h>

#include "synth/synth_test_util.hpp"
#include "zeeline/atomic/level.hpp"
#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/synth/stokes_synthesizer.hpp"

namespace zeeline {
namespace {

constexpr double kPi = 3.14159265358979323846;
const double kFwhmToSigma = 1.0 / (2.0 * std::sqrt(2.0 * std::log(2.0)));

Eigen::ArrayXd Grid(int n, double step) { return Eigen::ArrayXd::LinSpaced(n, 0.0, step * (n - 1)); }

Eigen::ArrayXd GaussianDip(const Eigen::ArrayXd& x, double centre, double fwhm, double depth) {
  const double sigma = fwhm * kFwhmToSigma;
  return 1.0 - depth * (-(x - centre).square() / (2 * sigma * sigma)).exp();
}

// Full width at half depth of a dip below 1, by linear interpolation of the two half-depth crossings.
double MeasuredFwhm(const Eigen::ArrayXd& x, const Eigen::ArrayXd& y) {
  Eigen::Index imin = 0;
  const double half = 1.0 - 0.5 * (1.0 - y.minCoeff(&imin));
  Eigen::Index l = imin, r = imin;
  while (l > 0 && y[l] < half) --l;
  while (r < y.size() - 1 && y[r] < half) ++r;
  const double xl = x[l] + (half - y[l]) * (x[l + 1] - x[l]) / (y[l + 1] - y[l]);
  const double xr = x[r - 1] + (half - y[r - 1]) * (x[r] - x[r - 1]) / (y[r] - y[r - 1]);
  return xr - xl;
}

// The convolution of two Gaussians is a Gaussian whose FWHMs add in quadrature (textbook).
TEST(InstrumentProfile, GaussianWidthsAddInQuadrature) {
  const double step = 1e-4;
  const Eigen::ArrayXd x = Grid(801, step);
  const double w1 = 6e-3, w2 = 4e-3;
  Eigen::ArrayXd y = GaussianDip(x, 0.04, w1, 0.6);
  ASSERT_NEAR(MeasuredFwhm(x, y), w1, 2e-3 * w1);  // the measuring helper itself
  InstrumentProfileOptions o;
  o.gaussian_fwhm_nm = w2;
  ProfileConvolver conv(static_cast<int>(x.size()), step, o);
  conv.Apply(y);
  EXPECT_CLOSE(MeasuredFwhm(x, y), std::sqrt(w1 * w1 + w2 * w2), 2e-3, 0.0);
  // equivalent width (area of the dip) is conserved
  EXPECT_CLOSE((1.0 - y).sum() * step, 0.6 * w1 * kFwhmToSigma * std::sqrt(2 * kPi), 1e-6, 0.0);
  // and the full result equals the analytic Gaussian of combined width and reduced depth
  const double w = std::sqrt(w1 * w1 + w2 * w2);
  EXPECT_LE((y - GaussianDip(x, 0.04, w, 0.6 * w1 / w)).abs().maxCoeff(), 1e-9);
}

// Constant extension at the edges: a constant is unchanged everywhere, including the ends (no wrap-around).
TEST(InstrumentProfile, ConstantAndEdgesArePreserved) {
  InstrumentProfileOptions o;
  o.gaussian_fwhm_nm = 5e-3;
  ProfileConvolver conv(60, 1e-3, o);
  Eigen::ArrayXd c = Eigen::ArrayXd::Constant(60, 0.7);
  conv.Apply(c);
  EXPECT_LE((c - 0.7).abs().maxCoeff(), 1e-13);
  // a dip near the left edge must not leak into the right edge
  Eigen::ArrayXd y = GaussianDip(Grid(60, 1e-3), 0.003, 4e-3, 0.5);
  conv.Apply(y);
  EXPECT_NEAR(y[59], 1.0, 1e-12);
}

// A symmetric three-point box (response 1 at offsets -h, 0, +h) is the moving average; on a sinusoid of
// wavenumber k it multiplies by (1 + 2 cos(k h)) / 3 (textbook transfer function of a 3-point average).
TEST(InstrumentProfile, TabulatedBoxIsMovingAverage) {
  const double h = 1e-3;
  const int n = 200;
  InstrumentProfileOptions o;
  o.table_offset_nm = {-1.5 * h, -1.0 * h, 1.0 * h, 1.5 * h};
  o.table_response = {1.0, 1.0, 1.0, 1.0};
  ProfileConvolver conv(n, h, o);
  const Eigen::ArrayXd x = Grid(n, h);
  const double k = 2 * kPi / (25 * h);
  Eigen::ArrayXd y = (k * x).sin();
  conv.Apply(y);
  const double gain = (1 + 2 * std::cos(k * h)) / 3;
  for (int i = 10; i < n - 10; ++i) EXPECT_NEAR(y[i], gain * std::sin(k * x[i]), 1e-12) << i;
}

// A finely tabulated Gaussian and the analytic Gaussian transfer function agree.
TEST(InstrumentProfile, TabulatedGaussianMatchesAnalyticGaussian) {
  const double step = 2e-4, fwhm = 3e-3;
  InstrumentProfileOptions table;
  for (int i = -400; i <= 400; ++i) {
    const double off = i * 2.5e-5;
    table.table_offset_nm.push_back(off);
    const double s = fwhm * kFwhmToSigma;
    table.table_response.push_back(std::exp(-off * off / (2 * s * s)));
  }
  InstrumentProfileOptions gauss;
  gauss.gaussian_fwhm_nm = fwhm;
  const Eigen::ArrayXd x = Grid(300, step);
  Eigen::ArrayXd a = GaussianDip(x, 0.03, 5e-3, 0.7), b = a;
  ProfileConvolver(300, step, table).Apply(a);
  ProfileConvolver(300, step, gauss).Apply(b);
  EXPECT_LE((a - b).abs().maxCoeff(), 1e-4);  // sampling of the kernel at step / fwhm = 1/15
}

TEST(InstrumentProfile, IdentityLeavesDataUnchangedAndStokesColumnsAreConvolved) {
  ProfileConvolver id(10, 1e-3, InstrumentProfileOptions{});
  EXPECT_TRUE(id.is_identity());
  Eigen::ArrayXd y = Eigen::ArrayXd::LinSpaced(10, 0.0, 1.0), y0 = y;
  id.Apply(y);
  EXPECT_EQ((y - y0).abs().maxCoeff(), 0.0);

  InstrumentProfileOptions o;
  o.gaussian_fwhm_nm = 3e-3;
  ProfileConvolver conv(100, 1e-4, o);
  StokesArray s(100, 4);
  for (int c = 0; c < 4; ++c) s.col(c) = GaussianDip(Grid(100, 1e-4), 0.005, 2e-3, 0.1 * (c + 1));
  StokesArray expected = s;
  for (int c = 0; c < 4; ++c) conv.Apply(expected.col(c));
  conv.Apply(s);
  EXPECT_EQ((s - expected).abs().maxCoeff(), 0.0);
}

// Macroturbulence: a Gaussian velocity distribution exp(-(v/vmac)^2) has FWHM 2 sqrt(ln 2) vmac; in
// wavelength units multiply by lambda / c (c = 299792.458 km/s, exact).
TEST(InstrumentProfile, MacroturbulenceFwhm) {
  EXPECT_CLOSE(MacroturbulenceFwhm_nm(500.0, 2.0), 2 * std::sqrt(std::log(2.0)) * 2.0 * 500.0 / 299792.458,
               1e-14, 0.0);
}

TEST(InstrumentProfile, InvalidOptionsAreRejectedWithTheFieldName) {
  InstrumentProfileOptions o;
  o.gaussian_fwhm_nm = -1.0;
  EXPECT_NE(o.Validate().find("gaussian_fwhm_nm = -1"), std::string::npos);
  EXPECT_THROW(ProfileConvolver(10, 1e-3, o), OptionError);
  o = InstrumentProfileOptions{};
  o.table_offset_nm = {0.0, 1.0};
  o.table_response = {1.0};
  EXPECT_NE(o.Validate().find("table_response"), std::string::npos);
  o.table_response = {1.0, -1.0};
  EXPECT_NE(o.Validate().find("table_response[1] = -1"), std::string::npos);
  o.table_offset_nm = {1.0, 0.0};
  o.table_response = {1.0, 1.0};
  EXPECT_NE(o.Validate().find("ascending"), std::string::npos);
  EXPECT_THROW(ProfileConvolver(1, 1e-3, InstrumentProfileOptions{}), OptionError);
  EXPECT_THROW(ProfileConvolver(10, 0.0, InstrumentProfileOptions{}), OptionError);
  InstrumentProfileOptions g;
  g.gaussian_fwhm_nm = 1e-3;
  ProfileConvolver conv(10, 1e-3, g);
  Eigen::ArrayXd wrong(11);
  wrong.setOnes();
  EXPECT_THROW(conv.Apply(wrong), OptionError);
}

}  // namespace
}  // namespace zeeline

namespace zeeline {
namespace {

// The per-pixel synthesizer needs a uniform ascending grid as soon as a convolution is requested.
TEST(InstrumentProfile, SynthesizerRejectsNonUniformGridOnlyWhenConvolving) {
  MeLine line;
  line.wavelength_nm = 630.2494;
  line.pattern = ComputeZeemanPattern(ParseLevel("5P1"), ParseLevel("5D0"));
  Eigen::ArrayXd w(4);
  w << 630.20, 630.21, 630.23, 630.24;
  EXPECT_NO_THROW(StokesSynthesizer({line}, w, SynthesisOptions{}));
  SynthesisOptions o;
  o.instrument.gaussian_fwhm_nm = 2e-3;
  EXPECT_THROW(StokesSynthesizer({line}, w, o), OptionError);
  EXPECT_THROW(StokesSynthesizer({line}, Eigen::ArrayXd::Constant(4, 630.2), o), OptionError);
  o = SynthesisOptions{};
  o.macroturbulence_kms = -1.0;
  EXPECT_THROW(StokesSynthesizer({line}, UniformWavelengthGrid(630.25, 0.1, 11), o), OptionError);
}

}  // namespace
}  // namespace zeeline
