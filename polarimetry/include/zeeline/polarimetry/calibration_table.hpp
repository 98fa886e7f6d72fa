// zeeline/polarimetry/calibration_table.hpp -- the calibration-sequence table read by
// `zeeline calibrate modulation` (docs/polarimetry.md).
//
// CSV with a required header line: state_name,polarizer_deg,retarder_deg,m1,...,mN (N >= 4 modulation
// states, named m1..mN in order). '#' starts a comment line; blank lines are skipped. One row per
// calibration state:
//   state_name     unique; a name starting with "dark" = light blocked (angles ignored), "open" = nothing
//                  in the beam (both angles must be blank); the first "open..." state has transmission 1.
//   polarizer_deg  axis of the calibration polariser, degrees counter-clockwise from +x (blank = out of
//                  the beam). This polariser defines the Q/U frame.
//   retarder_deg   fast axis of the calibration retarder, same sense (blank = out of the beam).
//   m1..mN         detector counts of each modulation state (finite numbers).
// Light goes source -> calibration polariser -> calibration retarder -> polarimeter.
// Every problem throws CalibrationError naming the file, the line and the column.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include <Eigen/Dense>

namespace zeeline::polarimetry {

struct CalibrationState {
  std::string name;
  std::optional<double> polariser_deg;  ///< nullopt = polariser out of the beam
  std::optional<double> retarder_deg;   ///< nullopt = retarder out of the beam
  bool dark = false;                    ///< light blocked
  bool open = false;                    ///< nothing in the beam
  Eigen::VectorXd counts;               ///< m1..mN
  int line = 0;                         ///< line number in the file (1-based)
};

struct CalibrationSequence {
  std::string source;  ///< file name, for messages
  int n_modulation = 0;
  std::vector<CalibrationState> states;

  /// Index of the first state named open... (-1 when there is none).
  int FirstOpen() const;
};

CalibrationSequence ParseCalibrationTable(const std::string& text, const std::string& origin);
CalibrationSequence ReadCalibrationTable(const std::string& path);

}  // namespace zeeline::polarimetry
