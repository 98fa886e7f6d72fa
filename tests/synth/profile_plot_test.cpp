// The text column of the Stokes pictures (measure, profile, broadening): lines are wrapped to the column
// measured in pixels with the font cairo draws, never inside a word.
#include "synth/profile_plot.hpp"

#include <sstream>
#include <string>
#include <vector>

#include <gtest/gtest.h>

namespace zeeline {
namespace {

std::vector<std::string> Words(const std::vector<std::string>& lines) {
  std::vector<std::string> w;
  for (const auto& l : lines) {
    std::istringstream in(l);
    std::string t;
    while (in >> t) w.push_back(t);
  }
  return w;
}

TEST(ProfilePlotText, LongLinesWrapAtSpacesWithinTheColumn) {
  const std::vector<std::string> text = {
      "      outside validity: g_eff*dlambda_B/w = 14.8 >= 0.15 (splitting not small against the line width)",
      "      valid: resolved, sigma separation 38.67 +- 0.011 pm vs component FWHM 2.228 pm (separation/FWHM 17.4, "
      "resolution ratio 1)",
      "short line",
      ""};
  const std::vector<std::string> wrapped = WrapAnnotation(text);
  EXPECT_GT(wrapped.size(), text.size());  // the two long lines needed wrapping
  for (const auto& l : wrapped)
    EXPECT_LE(AnnotationTextWidthPx(l), AnnotationColumnWidthPx()) << "'" << l << "' overflows the column";
  EXPECT_EQ(Words(wrapped), Words(text));  // every word intact, in order
  EXPECT_EQ(wrapped.back(), "");           // blank lines kept
}

TEST(ProfilePlotText, AnOverlongPathIsSplitAfterSlashesOnly) {
  const std::string path =
      "spectrum: /data/observations/2026/campaign_north/slit_scans/very_long_directory_name/umbra_core_scan.fits";
  const std::vector<std::string> wrapped = WrapAnnotation({path});
  ASSERT_GT(wrapped.size(), 1u);
  std::string joined;
  for (std::size_t i = 0; i < wrapped.size(); ++i) {
    EXPECT_LE(AnnotationTextWidthPx(wrapped[i]), AnnotationColumnWidthPx()) << wrapped[i];
    std::string piece = wrapped[i];
    piece.erase(0, piece.find_first_not_of(' '));
    if (i + 1 < wrapped.size() && i > 0) {
      const char last = piece.back();
      EXPECT_TRUE(last == '/' || last == '_' || last == ',') << "split inside a name: '" << piece << "'";
    }
    joined += (i == 1 ? " " : "") + piece;
  }
  EXPECT_EQ(joined, path);
}

}  // namespace
}  // namespace zeeline
