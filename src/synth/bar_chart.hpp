// bar_chart.hpp (private; used by `zeeline broadening budget --png`) -- horizontal bars on a logarithmic
// axis, drawn with cairo into a PNG: one bar per labelled value (e.g. the FWHM of each broadening
// mechanism), coloured by category, the value printed at the end of each bar, decade ticks labelled with the
// shared tick labels (core/axis_ticks.hpp).
#pragma once

#include <string>
#include <vector>

namespace zeeline {

struct Bar {
  std::string label;
  double value = 0.0;      ///< > 0 to be drawn (log axis); others are listed as "0"
  int category = 0;        ///< index into BarChartOptions::categories (colour)
  bool highlight = false;  ///< drawn with a heavy outline (e.g. the dominant mechanism)
};

struct BarChartOptions {
  int width_px = 900;
  std::string title;
  std::string axis_label;                ///< e.g. "FWHM [nm]"
  std::vector<std::string> categories;   ///< legend names, one colour each
  std::vector<std::string> footer;       ///< text lines under the chart
};

/// Writes the PNG; throws PlotError (synth/profile_plot.hpp) naming the path when it cannot.
void WriteBarChartPng(const std::string& path, const std::vector<Bar>& bars, const BarChartOptions& options);

}  // namespace zeeline
