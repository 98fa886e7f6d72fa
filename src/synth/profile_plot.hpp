// profile_plot.hpp (private to zeeline; used by `zeeline profile --png`) -- four stacked panels
// I, Q/Ic, U/Ic, V/Ic against wavelength, drawn with cairo into a PNG file.
// Ticks use "nice" steps (1, 2, 5 x 10^k); the wavelength axis is labelled as an offset from the
// centre wavelength in pm when the window is narrower than 1 nm, otherwise in nm.
#pragma once

#include <stdexcept>
#include <string>
#include <vector>

#include <Eigen/Core>

#include "zeeline/synth/me_parameters.hpp"

namespace zeeline {

/// An extra curve drawn over one panel (same wavelengths as the data), e.g. a fitted model.
struct PlotCurve {
  int panel = 0;              ///< 0 I, 1 Q, 2 U, 3 V
  Eigen::ArrayXd y;           ///< same units as the panel's data before normalisation
  double r = 0.8, g = 0.1, b = 0.1;
  bool dashed = false;
};

struct StokesPlotOptions {
  int width_px = 900;
  int height_px = 1100;
  std::string title;            ///< drawn above the top panel
  double continuum = 1.0;       ///< Ic used to normalise I, Q, U, V (must be non-zero)
  double centre_nm = 0.0;       ///< reference wavelength for the axis labels
  bool divide_by_continuum = true;  ///< true: all panels / Ic (labels "I / Ic", ...); false: data units
  std::vector<PlotCurve> overlays;  ///< drawn over the data, clipped to the panels
  std::vector<double> markers_nm;   ///< short vertical ticks on the I panel (e.g. component positions)
  std::vector<std::string> annotation;  ///< text lines in a column right of the panels (widens the image)
};

/// The annotation lines as the picture draws them in its text column: wrapped at spaces to the column
/// width (words are never split; only a token wider than the column by itself, e.g. a file path, is split,
/// after a '/', '_' or ',' where it has one). Continuation lines are indented two more spaces.
std::vector<std::string> WrapAnnotation(const std::vector<std::string>& lines);
/// Width in pixels of `line` in the annotation font, and the width available in the column.
double AnnotationTextWidthPx(const std::string& line);
double AnnotationColumnWidthPx();

/// Thrown when the PNG cannot be written; the message names the path.
class PlotError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

void WriteStokesPlotPng(const std::string& path, const Eigen::ArrayXd& wavelength_nm, const StokesArray& stokes,
                        const StokesPlotOptions& options);

}  // namespace zeeline
