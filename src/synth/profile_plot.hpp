// profile_plot.hpp (private to zeeline; used by `zeeline profile --png`) -- four stacked panels
// I, Q/Ic, U/Ic, V/Ic against wavelength, drawn with cairo into a PNG file.
// Ticks use "nice" steps (1, 2, 5 x 10^k); the wavelength axis is labelled as an offset from the
// centre wavelength in pm when the window is narrower than 1 nm, otherwise in nm.
#pragma once

#include <stdexcept>
#include <string>

#include <Eigen/Core>

#include "zeeline/synth/me_parameters.hpp"

namespace zeeline {

struct StokesPlotOptions {
  int width_px = 900;
  int height_px = 1100;
  std::string title;            ///< drawn above the top panel
  double continuum = 1.0;       ///< Ic used to normalise Q, U, V (must be non-zero)
  double centre_nm = 0.0;       ///< reference wavelength for the axis labels
};

/// Thrown when the PNG cannot be written; the message names the path.
class PlotError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

void WriteStokesPlotPng(const std::string& path, const Eigen::ArrayXd& wavelength_nm, const StokesArray& stokes,
                        const StokesPlotOptions& options);

}  // namespace zeeline
