// `zeeline map`: field maps from a Stokes cube (a thin layer over maps/field_maps.hpp and io/).
#include <unistd.h>

#include <atomic>
#include <csignal>
#include <cstdio>
#include <filesystem>
#include <iostream>
#include <memory>
#include <sstream>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/line_selection.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/io/air_vacuum.hpp"
#include "zeeline/io/cube_reader.hpp"
#include "zeeline/io/field_map_writer.hpp"
#include "zeeline/io/quality_flags.hpp"
#include "zeeline/maps/field_maps.hpp"

namespace zeeline::cli {
namespace {

std::atomic<bool> g_interrupted{false};
extern "C" void OnInterrupt(int) { g_interrupted.store(true); }

struct MapArgs {
  std::string cube, output, method = "auto", window, continuum_exclude, transverse = "core", core, wing_start;
  std::string png_dir;
  LineSelectionArgs line;
  double noise = 0.0, weak_ratio = 0.3, resolution_ratio = 1.0, detection_sigma = 3.0;
  int threads = 0, v_sign = 1;
  bool overwrite = false, resume = false, require_transverse = false, quiet = false;
  std::string command_line;
};

std::string JoinArgs(int argc, char** argv) {
  std::string s;
  for (int i = 0; i < argc; ++i) s += (i ? " " : "") + std::string(argv[i]);
  return s;
}

void RunMap(const MapArgs& a) {
  namespace fs = std::filesystem;
  if (a.output.empty()) throw OptionError("-o MAPS.fits is required");
  if (fs::exists(a.output) && !a.overwrite)
    throw OutputError(a.output + ": exists; use --overwrite to replace it (nothing was written)");
  const SelectedLine line = ResolveLine(a.line);

  CubeReadOptions read;
  read.v_sign = a.v_sign;
  const std::string bad_read = read.Validate();
  if (!bad_read.empty()) throw OptionError(bad_read);
  CubeReader reader(a.cube, read);
  const CubeInfo& info = reader.info();

  FieldMapOptions o;
  o.method = MapMethodFromString(a.method);
  o.pattern = line.pattern;
  o.rest_wavelength_nm = line.rest_wavelength_nm;
  if (line.frame && *line.frame != info.frame)
    o.rest_wavelength_nm = ConvertWavelength_nm(line.rest_wavelength_nm, *line.frame, info.frame);
  if (!a.window.empty()) o.window_halfwidth_nm = ParseWavelength_nm(a.window);
  if (!a.continuum_exclude.empty()) o.continuum_exclude_nm = ParseWavelength_nm(a.continuum_exclude);
  o.noise_rel = a.noise;
  o.transverse = TransverseRegionFromString(a.transverse);
  if (!a.core.empty()) o.core_halfwidth_nm = ParseWavelength_nm(a.core);
  if (!a.wing_start.empty()) o.wing_start_nm = ParseWavelength_nm(a.wing_start);
  o.weak_ratio = a.weak_ratio;
  o.resolution_ratio = a.resolution_ratio;
  o.detection_sigma = a.detection_sigma;
  o.need_transverse = a.require_transverse;
  o.threads = a.threads;
  const std::string bad = o.Validate();
  if (!bad.empty()) throw OptionError(bad);

  std::ostringstream fp;
  fp.precision(17);
  std::error_code ec;
  fp << fs::absolute(a.cube, ec).string() << "|" << fs::file_size(fs::path(a.cube), ec) << "|" << a.method << "|"
     << o.rest_wavelength_nm << "|" << o.pattern.g_eff << "|" << o.pattern.G << "|" << o.window_halfwidth_nm << "|"
     << o.continuum_exclude_nm << "|" << o.noise_rel << "|" << a.transverse << "|" << o.core_halfwidth_nm << "|"
     << o.wing_start_nm << "|" << o.weak_ratio << "|" << o.resolution_ratio << "|" << o.detection_sigma << "|"
     << a.v_sign;
  FieldMapRunOptions run;
  run.fingerprint = fp.str();
  run.resume = a.resume;
  if (a.resume) run.checkpoint_path = a.output + ".checkpoint";
  run.cancel = &g_interrupted;
  const bool show_progress = !a.quiet && isatty(STDERR_FILENO);
  if (show_progress) {
    run.progress = [](long done, long total) {
      const int width = 40;
      const int filled = static_cast<int>(width * done / std::max(total, 1L));
      std::fprintf(stderr, "\r[%.*s%*s] %ld/%ld rows", filled, "########################################",
                   width - filled, "", done, total);
      if (done == total) std::fprintf(stderr, "\n");
      std::fflush(stderr);
    };
  }
  if (!info.stokes.empty() && info.StokesIndex(StokesParameter::kQ) < 0 && !a.quiet)
    std::fprintf(stderr, "zeeline: note: %s has no Stokes Q/U; writing line-of-sight maps only\n", a.cube.c_str());

  g_interrupted.store(false);
  auto previous = std::signal(SIGINT, OnInterrupt);
  FieldMaps maps;
  RunStatus status;
  try {
    status = ComputeFieldMaps(reader, o, run, maps);
  } catch (...) {
    std::signal(SIGINT, previous);
    throw;
  }
  std::signal(SIGINT, previous);
  if (status == RunStatus::kCancelled) {
    std::fprintf(stderr, "\nzeeline: interrupted; no map file was written%s\n",
                 a.resume ? (" (checkpoint " + run.checkpoint_path + " kept for --resume)").c_str() : "");
    std::exit(130);
  }

  // Assemble the HDUs: only the maps that carry information for this cube and method.
  std::vector<ImageHdu> hdus;
  auto add = [&](int slot) {
    const auto& v = maps.slots[static_cast<std::size_t>(slot)];
    bool any = false;
    for (float x : v) any |= std::isfinite(x);
    if (!any) return;
    hdus.push_back(MakeMap(MapSlotName(slot), maps.nx, maps.ny, std::vector<double>(v.begin(), v.end())));
  };
  for (int s = 0; s < kSlotCount; ++s) add(s);
  ImageHdu method = MakeMap(map_names::kMethod, maps.nx, maps.ny,
                            std::vector<double>(maps.method.begin(), maps.method.end()));
  method.type = FitsPixelType::kInt16;
  method.keywords.push_back({"METH1", std::string("wfa"), "weak-field approximation"});
  method.keywords.push_back({"METH2", std::string("cog"), "centre of gravity"});
  method.keywords.push_back({"METH3", std::string("split"), "resolved splitting"});
  hdus.push_back(method);
  ImageHdu quality = MakeMap(map_names::kQuality, maps.nx, maps.ny,
                             std::vector<double>(maps.quality.begin(), maps.quality.end()));
  quality.type = FitsPixelType::kInt32;
  hdus.push_back(quality);

  FitsWriteOptions w;
  w.overwrite = a.overwrite;
  w.provenance.command_line = a.command_line;
  w.provenance.method = a.method;
  w.provenance.line = line.description;
  w.provenance.input = a.cube;
  w.provenance.history.push_back("rest wavelength used " + std::to_string(o.rest_wavelength_nm) + " nm (" +
                                 ToString(info.frame) + ")");
  WriteFieldMaps(a.output, hdus, info.spatial_wcs_header, w);
  if (a.resume) fs::remove(run.checkpoint_path, ec);

  if (!a.quiet) {
    long flagged = 0;
    for (auto q : maps.quality) flagged += q != 0;
    std::printf("maps: %s (%ld x %ld pixels, %zu HDUs)\n", a.output.c_str(), maps.nx, maps.ny, hdus.size() + 1);
    std::printf("line: %s\n", line.description.c_str());
    std::printf("method per pixel: wfa %lld, cog %lld, split %lld; pixels with QUALITY flags: %ld\n",
                static_cast<long long>(maps.method_counts[1]), static_cast<long long>(maps.method_counts[2]),
                static_cast<long long>(maps.method_counts[3]), flagged);
  }
}

}  // namespace

void AddMapCommand(CLI::App& app, int argc, char** argv) {
  auto a = std::make_shared<MapArgs>();
  a->command_line = JoinArgs(argc, argv);
  auto* cmd = app.add_subcommand("map", "Field maps (BLOS, BTRANS, FIELD, INCLINATION, AZIMUTH, VLOS + errors) from a Stokes cube");
  cmd->footer(
      "Methods: wfa (weak field), cog (centre of gravity), split (resolved splitting), auto (per pixel,\n"
      "recorded in the METHOD map; thresholds in docs/methods.md).\n"
      "Examples:\n"
      "  zeeline map cube.fits --lower 5P1 --upper 5D0 --wavelength 630.2494nm --frame air -o maps.fits\n"
      "  zeeline map cube.fits --line FeI_6302 --catalog demo_maps/lines.csv --method wfa --png quicklook/ -o maps.fits");
  cmd->add_option("cube", a->cube, "Stokes cube (FITS; cube.fits[2] or cube.fits[EXTNAME] picks an HDU)")->required();
  cmd->add_option("-o,--output", a->output, "output map file (FITS)")->required();
  AddLineSelectionOptions(cmd, a->line, "default: the frame of the cube's spectral axis");
  cmd->add_option("--method", a->method, "wfa | cog | split | auto")->capture_default_str();
  cmd->add_option("--window", a->window, "half-width of the fit window around the line, e.g. 0.012nm (default: from the mean line profile)");
  cmd->add_option("--continuum-exclude", a->continuum_exclude, "continuum = samples farther than this from the line (default: the window)");
  cmd->add_option("--noise", a->noise, "noise in units of the continuum (default: measured in the continuum)");
  cmd->add_option("--transverse", a->transverse, "weak-field BTRANS region: core | wings | core+wings | whole")->capture_default_str();
  cmd->add_option("--core", a->core, "weak-field core half-width, e.g. 0.006nm");
  cmd->add_option("--wing-start", a->wing_start, "weak-field wing region start from line centre, e.g. 0.008nm");
  cmd->add_option("--weak-ratio", a->weak_ratio, "auto: splitting/width below which wfa is used")->capture_default_str();
  cmd->add_option("--resolution-ratio", a->resolution_ratio, "splitting/width above which sigma groups are resolved")->capture_default_str();
  cmd->add_option("--detection-sigma", a->detection_sigma, "LOW_SIGNAL below this many sigma")->capture_default_str();
  cmd->add_option("--v-sign", a->v_sign, "+1, or -1 for data using the IAU 1974 sign of V (docs/conventions.md)")->capture_default_str();
  cmd->add_flag("--require-transverse", a->require_transverse, "refuse cubes without Stokes Q and U");
  cmd->add_option("--threads", a->threads, "worker threads (0 = all cores)")->capture_default_str();
  cmd->add_option("--png", a->png_dir, "also write quicklook PNGs into this directory");
  cmd->add_flag("--overwrite", a->overwrite, "replace an existing output file");
  cmd->add_flag("--resume", a->resume, "keep a checkpoint (OUTPUT.checkpoint) and continue an interrupted run from it");
  cmd->add_flag("-q,--quiet", a->quiet, "no progress bar or summary");
  cmd->callback([a] { RunMap(*a); });
}

}  // namespace zeeline::cli
