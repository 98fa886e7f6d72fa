// pattern_sweep_plot.hpp (private to zeeline; used by `zeeline line --fields ... --png`) -- positions of the
// Zeeman components of one line against the field strength, drawn with cairo into a PNG file.
// One curve per component label (M_u -> M_l); colour by group (sigma_b blue, pi green, sigma_r red), line
// width growing with the component's strength; optional dashed grey reference curves (the linear pattern).
// Ticks use the "nice" steps of core/axis_ticks.hpp. The PNG is written to a temporary file and renamed.
#pragma once

#include <string>
#include <vector>

namespace zeeline {

struct SweepCurve {
  int q = 0;                    ///< -1 sigma_b, 0 pi, +1 sigma_r
  std::vector<double> x, y;     ///< field and position, same length
  std::vector<double> strength; ///< per point, 0..1 (line width); empty = thin
};

struct SweepPlotOptions {
  int width_px = 1000;
  int height_px = 700;
  std::string title, x_label, y_label;
  std::vector<SweepCurve> curves;
  std::vector<SweepCurve> reference;      ///< dashed grey (e.g. the linear pattern)
  std::vector<std::string> annotation;    ///< text lines at the top left inside the frame
};

/// Throws PlotError (synth/profile_plot.hpp) naming the path when the PNG cannot be written.
void WriteSweepPlotPng(const std::string& path, const SweepPlotOptions& options);

}  // namespace zeeline
