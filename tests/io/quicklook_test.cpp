// Tests of io/quicklook: colour maps against their published definitions (values from memory are
// marked), percentile definition against numpy's, PNG content read back with cairo.
#include "zeeline/io/quicklook.hpp"

#include <cairo.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <limits>

#include "io_test_util.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline {
namespace {

// Published control points are 8-bit values; our LUT rounds to 8 bits after a float pipeline.
constexpr int kPublishedColourTol = 2;

// CIE L* of an sRGB colour (CIE 15:2004; sRGB IEC 61966-2-1), D65 white.
double Lightness(const std::array<unsigned char, 3>& c) {
  auto lin = [](double v) { return v <= 0.04045 ? v / 12.92 : std::pow((v + 0.055) / 1.055, 2.4); };
  const double y = 0.2126 * lin(c[0] / 255.0) + 0.7152 * lin(c[1] / 255.0) + 0.0722 * lin(c[2] / 255.0);
  return y > 216.0 / 24389.0 ? 116.0 * std::cbrt(y) - 16.0 : 24389.0 / 27.0 * y;
}

void ExpectColour(const std::array<unsigned char, 3>& got, int r, int g, int b) {
  EXPECT_NEAR(got[0], r, kPublishedColourTol);
  EXPECT_NEAR(got[1], g, kPublishedColourTol);
  EXPECT_NEAR(got[2], b, kPublishedColourTol);
}

TEST(Quicklook, DivergingMapMatchesMoreland2009CoolWarmControlPoints) {
  // Moreland (2009) cool-warm: endpoints (59, 76, 192) and (180, 4, 38); the published 33-entry table
  // has (221, 221, 221) in the middle (from memory).
  ExpectColour(ColourAt(ColourMapKind::kDiverging, 0.0), 59, 76, 192);
  ExpectColour(ColourAt(ColourMapKind::kDiverging, 1.0), 180, 4, 38);
  ExpectColour(ColourAt(ColourMapKind::kDiverging, 0.5), 221, 221, 221);
  // Lightness peaks in the middle (Moreland 2009, design requirement).
  EXPECT_GT(Lightness(ColourAt(ColourMapKind::kDiverging, 0.5)), Lightness(ColourAt(ColourMapKind::kDiverging, 0.25)));
  EXPECT_GT(Lightness(ColourAt(ColourMapKind::kDiverging, 0.5)), Lightness(ColourAt(ColourMapKind::kDiverging, 0.75)));
}

TEST(Quicklook, SequentialCubehelixLightnessIncreasesMonotonically) {
  // Green (2011): the cubehelix brightness rises monotonically with the fraction.
  double previous = -1.0;
  for (int i = 0; i <= 64; ++i) {
    const double l = Lightness(ColourAt(ColourMapKind::kSequential, i / 64.0));
    EXPECT_GT(l, previous) << i;
    previous = l;
  }
}

TEST(Quicklook, CyclicMapWrapsAndKeepsConstantLightness) {
  const auto first = ColourAt(ColourMapKind::kCyclic, 0.0), last = ColourAt(ColourMapKind::kCyclic, 1.0);
  ExpectColour(last, first[0], first[1], first[2]);
  for (int i = 0; i <= 36; ++i) EXPECT_NEAR(Lightness(ColourAt(ColourMapKind::kCyclic, i / 36.0)), 65.0, 0.6) << i;
}

TEST(Quicklook, PercentileFollowsNumpyLinearDefinition) {
  // numpy.percentile(np.arange(1, 101), [1, 50, 99]) = [1.99, 50.5, 99.01] (numpy docs, "linear").
  std::vector<double> v;
  for (int i = 100; i >= 1; --i) v.push_back(i);
  v.push_back(std::numeric_limits<double>::quiet_NaN());  // ignored
  EXPECT_NEAR(Percentile(v, 1.0), 1.99, 1e-12);
  EXPECT_NEAR(Percentile(v, 50.0), 50.5, 1e-12);
  EXPECT_NEAR(Percentile(v, 99.0), 99.01, 1e-12);
  EXPECT_TRUE(std::isnan(Percentile({std::nan("")}, 50.0)));
}

TEST(Quicklook, DivergingLimitsAreSymmetricAndAngleLimitsFixed) {
  ImageHdu blos = MakeMap("B_LOS", 4, 1, {-10.0, 0.0, 50.0, 100.0});
  QuicklookOptions o;
  o.lower_percentile = 0;
  o.upper_percentile = 100;
  const auto lim = ColourLimits(QuicklookFromHdu(blos), o);
  EXPECT_EQ(lim[0], -100.0);
  EXPECT_EQ(lim[1], 100.0);
  const auto az = ColourLimits(QuicklookFromHdu(MakeMap("B_AZIM", 1, 1, {3.0})), o);
  EXPECT_EQ(az[0], 0.0);
  EXPECT_EQ(az[1], 180.0);
  EXPECT_EQ(DefaultColourMap("B_AZIM"), ColourMapKind::kCyclic);
  EXPECT_EQ(DefaultColourMap("V_LOS"), ColourMapKind::kDiverging);
  EXPECT_EQ(DefaultColourMap("B_TOTAL"), ColourMapKind::kSequential);
}

TEST(Quicklook, PngShowsNanAsGreyAndTopValueWithTheTopColour) {
  test::TempDir dir;
  // 2 x 2 map: (x=0,y=0) NaN, others increasing; integer zoom 100 with panel 200 px.
  QuicklookMap m = QuicklookFromHdu(MakeMap("B_TOTAL", 2, 2, {std::nan(""), 1.0, 2.0, 3.0}));
  QuicklookOptions o;
  o.panel_size_px = 200;
  o.lower_percentile = 0;
  o.upper_percentile = 100;
  const std::string path = dir.File("f.png");
  WriteMapPng(path, m, o);
  cairo_surface_t* s = cairo_image_surface_create_from_png(path.c_str());
  ASSERT_EQ(cairo_surface_status(s), CAIRO_STATUS_SUCCESS);
  const int w = cairo_image_surface_get_width(s), h = cairo_image_surface_get_height(s);
  EXPECT_GT(w, 200);
  EXPECT_GT(h, 200);
  const unsigned char* d = cairo_image_surface_get_data(s);
  const int stride = cairo_image_surface_get_stride(s);
  auto pixel = [&](int x, int y) {
    const auto v = *reinterpret_cast<const std::uint32_t*>(d + y * stride + 4 * x);
    return std::array<int, 3>{static_cast<int>((v >> 16) & 255), static_cast<int>((v >> 8) & 255), static_cast<int>(v & 255)};
  };
  // Map area starts at (58, 34) (PanelGeometry); y is drawn upward, so map row 0 is at the bottom.
  const auto nan_px = pixel(58 + 50, 34 + 150);
  EXPECT_EQ(nan_px, (std::array<int, 3>{128, 128, 128}));
  const auto top = pixel(58 + 150, 34 + 50);  // (x=1, y=1) = 3.0 = upper limit
  const auto expected = ColourAt(ColourMapKind::kSequential, 1.0);
  EXPECT_EQ(top, (std::array<int, 3>{expected[0], expected[1], expected[2]}));
  cairo_surface_destroy(s);
  // Refuses to overwrite; summary sheet works.
  EXPECT_THROW(WriteMapPng(path, m, o), FitsError);
  WriteSummaryPng(dir.File("sheet.png"), {m, m, m, m}, "test", o);
  EXPECT_TRUE(std::filesystem::exists(dir.File("sheet.png")));
}

TEST(Quicklook, OptionsValidateNamesTheField) {
  QuicklookOptions o;
  o.lower_percentile = 80;
  o.upper_percentile = 20;
  EXPECT_NE(o.Validate().find("lower_percentile"), std::string::npos);
  EXPECT_THROW(WriteMapPng("/tmp/never.png", QuicklookMap{}, o), OptionError);
}

// ---- quicklooks a scientist can put on a slide (docs/fits.md, "Quicklook colour maps")

// After --disambiguate the azimuth is on [0, 360) (docs/conventions.md): the colour scale must cover it,
// whether the map says so (AZRANGE = 360, written by `map`) or only its values show it.
TEST(Quicklook, DisambiguatedAzimuthUsesTheFullCircle) {
  ImageHdu az = MakeMap("B_AZIM", 3, 1, {10.0, 200.0, 350.0});
  auto lim = ColourLimits(QuicklookFromHdu(az), {});
  EXPECT_EQ(lim[0], 0.0);
  EXPECT_EQ(lim[1], 360.0);
  ImageHdu folded = MakeMap("B_AZIM", 3, 1, {10.0, 100.0, 170.0});
  EXPECT_EQ(ColourLimits(QuicklookFromHdu(folded), {})[1], 180.0);
  folded.keywords.push_back({"AZRANGE", 360.0, ""});  // a disambiguated map that happens to stay below 180
  EXPECT_EQ(ColourLimits(QuicklookFromHdu(folded), {})[1], 360.0);
  // The truth map of a simulated cube gets the same treatment (TRUE_B_AZIM is on [0, 360)).
  EXPECT_EQ(ColourLimits(QuicklookFromHdu(MakeMap("TRUE_B_AZIM", 3, 1, {10.0, 200.0, 350.0})), {})[1], 360.0);
  EXPECT_EQ(QuicklookFromHdu(MakeMap("TRUE_B_LOS", 1, 1, {1.0})).kind, ColourMapKind::kDiverging);
}

TEST(Quicklook, AzimuthIsFadedWhereTheTransverseFieldIsBelowDetection) {
  QuicklookMap az = QuicklookFromHdu(MakeMap("B_AZIM", 4, 1, {10.0, 20.0, 30.0, 40.0}));
  FadeWeakAzimuth(az, {100.0, 20.0, std::nan(""), 31.0}, {10.0, 10.0, 10.0, 10.0}, 3.0);
  EXPECT_EQ(az.faded, (std::vector<unsigned char>{0, 1, 1, 0}));  // 10 sigma, 2 sigma, unknown, 3.1 sigma
  EXPECT_NE(az.fade_note.find("3 sigma"), std::string::npos);
  EXPECT_THROW(FadeWeakAzimuth(az, {1.0}, {1.0}, 3.0), OptionError);
}

TEST(Quicklook, TruthAndResultShareOneColourScale) {
  QuicklookMap result = QuicklookFromHdu(MakeMap("B_LOS", 4, 1, {-100.0, 0.0, 50.0, 100.0}));
  QuicklookMap truth = QuicklookFromHdu(MakeMap("TRUE_B_LOS", 4, 1, {-300.0, 0.0, 60.0, 120.0}));
  QuicklookOptions o;
  o.lower_percentile = 0.0;
  o.upper_percentile = 100.0;
  ShareColourLimits({&result, &truth}, o);
  EXPECT_EQ(ColourLimits(result, o), ColourLimits(truth, o));
  EXPECT_EQ(ColourLimits(truth, o)[0], -300.0);  // diverging, symmetric about 0, covering both maps
  EXPECT_EQ(ColourLimits(truth, o)[1], 300.0);
}

TEST(Quicklook, MethodAndQualityAreCategoricalWithOneNamedColourPerCode) {
  ImageHdu method = MakeMap("METHOD", 2, 1, {1.0, 4.0});
  method.keywords = {{"METH1", std::string("wfa"), ""}, {"METH2", std::string("cog"), ""},
                     {"METH3", std::string("split"), ""}, {"METH4", std::string("me"), ""}};
  const QuicklookMap m = QuicklookFromHdu(method);
  ASSERT_EQ(m.categories.size(), 5u);  // 0 none + four methods
  EXPECT_EQ(m.categories[1].name, "1 wfa");
  EXPECT_EQ(m.categories[4].name, "4 me");
  const QuicklookMap q = QuicklookFromHdu(MakeMap("QUALITY", 1, 1, {6.0}));
  EXPECT_TRUE(q.bit_flags);
  std::vector<std::string> names;
  for (const auto& c : q.categories) names.push_back(c.name);
  // Every bit of the library's list has its own entry, named as QualityBitNames names it.
  for (std::uint32_t b : {kQualityNonFiniteInput, kQualityLowSignal, kQualityNotConverged, kQualityBadFit}) {
    const std::string want = std::to_string(b) + " " + QualityBitNames(b).front();
    EXPECT_NE(std::find(names.begin(), names.end(), want), names.end()) << want;
  }
  for (std::size_t i = 0; i < q.categories.size(); ++i)
    for (std::size_t j = i + 1; j < q.categories.size() && j < 11; ++j)
      EXPECT_NE(q.categories[i].rgb, q.categories[j].rgb) << names[i] << " / " << names[j];
}

TEST(Quicklook, HelioprojectiveAxesAreInArcsecWithThePixelScale) {
  ImageHdu h = MakeMap("B_LOS", 40, 20, std::vector<double>(800, 1.0));
  h.wcs_header = MakeHelioprojectiveWcs(40, 20, 0.5, 100.0, -50.0);
  const QuicklookMap m = QuicklookFromHdu(h);
  ASSERT_TRUE(m.x_world && m.y_world);
  EXPECT_NEAR(m.x_world->step, 0.5, 1e-6);  // arcsec per pixel (TAN, small field: linear to 1e-6)
  EXPECT_NEAR(m.y_world->step, 0.5, 1e-6);
  // The image centre (0-based pixel 19.5, 9.5) is at the pointing (100", -50").
  EXPECT_NEAR(m.x_world->origin + 19.5 * m.x_world->step, 100.0, 1e-3);
  EXPECT_NEAR(m.y_world->origin + 9.5 * m.y_world->step, -50.0, 1e-3);
  EXPECT_NE(m.x_world->label.find("arcsec"), std::string::npos);
  EXPECT_NE(m.x_world->label.find("0.5 arcsec/pixel"), std::string::npos);
  EXPECT_FALSE(QuicklookFromHdu(MakeMap("B_LOS", 2, 2, {1, 2, 3, 4})).x_world);  // no WCS: pixel numbers
}

}  // namespace
}  // namespace zeeline
