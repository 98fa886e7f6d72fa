// map_command.hpp (CLI-private) -- the parts of `zeeline map` that the Python module calls too
// (src/python/): the options that set the computation, the FieldMapOptions they give for a cube, and the
// map images as they go into the map file, so that both give the same maps under the same names.
#pragma once

#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include "cli/line_selection.hpp"
#include "zeeline/io/cube_reader.hpp"
#include "zeeline/io/field_map_writer.hpp"
#include "zeeline/maps/field_maps.hpp"

namespace zeeline::cli {

struct MapArgs {
  std::string cube, output, method = "auto", window, continuum_exclude, transverse = "corrected", core, wing_start;
  std::string png_dir;
  LineSelectionArgs line;
  double noise = 0.0, weak_ratio = FieldMapOptions{}.weak_ratio, resolution_ratio = FieldMapOptions{}.resolution_ratio,
         detection_sigma = FieldMapOptions{}.detection_sigma, transverse_detection = FieldMapOptions{}.transverse_detection,
         shape_test_sigma = FieldMapOptions{}.consistency_sigma,
         transverse_model_error = FieldMapOptions{}.transverse_model_error,
         cog_model_error = FieldMapOptions{}.cog_model_error;
  int threads = 0, v_sign = 1;
  double tile_mib = CubeReadOptions{}.max_tile_mib;
  long rows_per_task = 0;  // under mpirun only (cli/parallel.hpp)
  bool overwrite = false, resume = false, require_transverse = false, quiet = false;
  // Milne-Eddington and disambiguation options.
  std::string fix, free, bounds, stokes_weights;
  std::vector<std::string> extra_lines;
  int restarts = 3, max_iterations = 60, smooth_azimuth = 0;
  double bad_chi2 = 5.0, mu = 1.0, disambig_sigma = 3.0;
  bool disambiguate = false, no_auto_me = false;
  std::string command_line;
};

/// The options of `map` that set the computation: the line, --method and the estimator, Milne-Eddington,
/// disambiguation and --threads/--v-sign options (not the cube, -o, --png, --overwrite, --resume, --quiet).
void AddMapComputeOptions(CLI::App* cmd, MapArgs& a);

/// How the cube is read (--v-sign, --threads, --tile-mib), validated.
CubeReadOptions MapReadOptions(const MapArgs& a);

struct MapSetup {
  FieldMapOptions options;   ///< validated
  std::string split_regime;  ///< non-empty when split uses the mixed-regime separation (printed by `map`)
};

/// The FieldMapOptions for this line and cube (rest wavelength in the cube's frame). Throws OptionError.
MapSetup MapOptionsFromArgs(const MapArgs& a, const SelectedLine& line, const CubeInfo& info);

/// The image HDUs of the map file in order, without values: every map slot (MapSlotName), METHOD (int16),
/// AZIM_PICK (int16, when disambiguated) and QUALITY (int32), with their keywords (docs/fits.md). The file
/// keeps the map slots that have a finite value (FieldMaps::slots_with_values) and the others.
std::vector<ImageHdu> MapHduLayout(long nx, long ny, const FieldMapOptions& o);
/// The HDUs of MapHduLayout that whole maps in memory fill (the Python module): map slots without a finite
/// value and AZIM_PICK without disambiguation left out. Without values: the caller takes them from `maps`
/// (slots, method, quality, disambiguation), in their own types, without a copy as doubles.
std::vector<ImageHdu> MapHdus(const FieldMaps& maps, const FieldMapOptions& o);

/// The caution `map` gives when the per-pixel noise came from fewer than kFewContinuumSamples continuum
/// samples (field_maps.hpp); empty otherwise and when the noise was given (`given_noise_rel` > 0, --noise).
std::string FewContinuumNotice(const FieldMaps& maps, double given_noise_rel);

}  // namespace zeeline::cli
