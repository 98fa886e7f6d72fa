// residual_plot.hpp (private to zeeline; used by `zeeline calibrate modulation --png`) -- noise-normalised
// residuals of a fit drawn with cairo into a PNG: one column per labelled row (e.g. calibration state),
// one colour per series (e.g. modulation state), dashed lines at +-1 and +-3, an annotation column.
#pragma once

#include <string>
#include <vector>

#include <Eigen/Core>

namespace zeeline {

struct ResidualPlotOptions {
  int width_px = 1100;
  int height_px = 560;
  std::string title;
  std::vector<std::string> row_labels;    ///< one per row of the residual matrix (x axis)
  std::vector<std::string> series_labels; ///< one per column (legend)
  std::vector<std::string> annotation;    ///< text lines right of the plot
};

/// Writes the PNG (temporary file + rename); throws FitsError-free std::runtime_error naming the path.
void WriteResidualPlotPng(const std::string& path, const Eigen::MatrixXd& residuals, const ResidualPlotOptions& options);

}  // namespace zeeline
