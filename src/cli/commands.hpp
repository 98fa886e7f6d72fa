// commands.hpp (CLI-private) -- each subcommand registers itself on the CLI11 app.
//
// A subcommand parses into an options struct, validates it, calls the library and prints. It reports
// failure by throwing (zeeline errors carry the file/keyword/token); main() turns exceptions into the
// documented exit codes (docs/cli.md):
//   0 success, 1 bad input data (file, level, catalog, FITS), 2 bad command line or option value,
//   3 output could not be written (or would overwrite without --overwrite), 130 interrupted.
#pragma once

#include <stdexcept>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include "zeeline/io/quicklook.hpp"

namespace zeeline::cli {

/// Thrown for output problems (exit code 3).
class OutputError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

void AddLandeCommand(CLI::App& app);
void AddLineCommand(CLI::App& app);
void AddProfileCommand(CLI::App& app);
/// argc/argv are recorded in the output provenance.
void AddMapCommand(CLI::App& app, int argc, char** argv);
void AddSimulateCommand(CLI::App& app, int argc, char** argv);
void AddMeasureCommand(CLI::App& app);
void AddInfoCommand(CLI::App& app);
void AddViewCommand(CLI::App& app);
void AddBroadeningCommand(CLI::App& app);
void AddCalibrateCommand(CLI::App& app);
void AddBenchCommand(CLI::App& app);

/// Quicklook PNG paths for a map file: DIR/<stem>_<extname>.png for each name, then DIR/<stem>_summary.png
/// (DIR defaults to the map file's directory).
std::vector<std::string> QuicklookTargets(const std::string& maps_path, const std::string& out_dir,
                                          const std::vector<std::string>& extnames);
/// Renders every 2-D image HDU of a map file plus a summary sheet (shared by `view` and `map --png`);
/// refuses before writing anything when a target exists and options.overwrite is false. With truth_path
/// (a cube from `simulate`), each map NAME that has a TRUE_NAME there is followed by that truth map on the
/// same colour scale. B_AZIM is faded where B_TRANS is below its detection threshold. Returns the paths.
std::vector<std::string> RenderQuicklooks(const std::string& maps_path, const std::string& out_dir,
                                          const zeeline::QuicklookOptions& options, const std::string& truth_path = "");

}  // namespace zeeline::cli
