// `zeeline map`: field maps from a Stokes cube (a thin layer over maps/field_maps.hpp and io/).
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>
#include <sstream>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/interrupt.hpp"
#include "cli/line_selection.hpp"
#include "cli/notices.hpp"
#include "cli/map_command.hpp"
#include "cli/map_file_sink.hpp"
#include "cli/parallel.hpp"
#include "zeeline/atomic/paschen_back.hpp"
#include "cli/output_paths.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/io/air_vacuum.hpp"
#include "zeeline/io/cube_reader.hpp"
#include "zeeline/io/field_map_writer.hpp"
#include "zeeline/io/quality_flags.hpp"
#include "zeeline/maps/field_maps.hpp"

namespace zeeline::cli {
namespace {

std::vector<std::string> SplitList(const std::string& text, char sep) {
  std::vector<std::string> out;
  std::string cur;
  for (char ch : text) {
    if (ch == sep) {
      out.push_back(cur);
      cur.clear();
    } else if (ch != ' ') {
      cur += ch;
    }
  }
  if (!cur.empty() || !out.empty()) out.push_back(cur);
  return out;
}

// A value of a Milne-Eddington parameter: b_total accepts units (G, kG, T, mT), v_los too (km/s, m/s);
// the others are plain numbers in the units of me_parameters.hpp (doppler_width accepts wavelength units).
double ParseMeValue(MeParam p, const std::string& text) {
  if (p == MeParam::kField) return ParseField_gauss(text);
  if (p == MeParam::kVlos) return ParseVelocity_kms(text);
  if (p == MeParam::kDopplerWidth) return ParseWavelength_nm(text);
  std::size_t used = 0;
  double v = 0.0;
  try {
    v = std::stod(text, &used);
  } catch (const std::exception&) {
    used = 0;
  }
  if (used == 0 || used != text.size())
    throw OptionError(std::string("value '") + text + "' for " + MeParamName(p) + " is not a number");
  return v;
}

// --fix fill=1,damping=0.15 ; --free fill,damping ; --bounds b_total=0:4000,v_los=-10:10 ;
// --stokes-weights 1,4,4,2 (into o.me).
void ApplyMeOptions(const MapArgs& a, FieldMapOptions& o) {
  MeInversionOptions& me = o.me;
  for (const std::string& item : SplitList(a.fix, ',')) {
    const auto eq = item.find('=');
    if (eq == std::string::npos || eq == 0 || eq + 1 == item.size())
      throw OptionError("--fix '" + item + "': expected NAME=VALUE, e.g. fill=1,damping=0.15");
    const MeParam p = MeParamFromName(item.substr(0, eq));
    me.free[static_cast<int>(p)] = false;
    me.fixed_values.Set(p, ParseMeValue(p, item.substr(eq + 1)));
  }
  for (const std::string& item : SplitList(a.free, ',')) {
    if (item.empty()) throw OptionError("--free '" + a.free + "': empty parameter name");
    me.free[static_cast<int>(MeParamFromName(item))] = true;
  }
  for (const std::string& item : SplitList(a.bounds, ',')) {
    const auto eq = item.find('='), colon = item.find(':', eq == std::string::npos ? 0 : eq);
    if (eq == std::string::npos || colon == std::string::npos)
      throw OptionError("--bounds '" + item + "': expected NAME=LOW:HIGH, e.g. b_total=0:4000");
    const MeParam p = MeParamFromName(item.substr(0, eq));
    me.lower[static_cast<int>(p)] = ParseMeValue(p, item.substr(eq + 1, colon - eq - 1));
    me.upper[static_cast<int>(p)] = ParseMeValue(p, item.substr(colon + 1));
  }
  if (!a.stokes_weights.empty()) {
    const auto w = SplitList(a.stokes_weights, ',');
    if (w.size() != 4) throw OptionError("--stokes-weights '" + a.stokes_weights + "': expected four numbers wI,wQ,wU,wV");
    for (int k = 0; k < 4; ++k) {
      try {
        me.stokes_weights[k] = std::stod(w[static_cast<std::size_t>(k)]);
      } catch (const std::exception&) {
        throw OptionError("--stokes-weights '" + a.stokes_weights + "': '" + w[static_cast<std::size_t>(k)] +
                          "' is not a number");
      }
    }
  }
  me.max_restarts = a.restarts;
  me.max_iterations = a.max_iterations;
  me.bad_fit_chi2 = a.bad_chi2;
  me.model.mu = a.mu;
  o.auto_me = !a.no_auto_me;
  o.disambiguate = a.disambiguate;
  o.disambiguation.smoothing_passes = a.smooth_azimuth;
  o.disambiguation.min_btrans_sigma = a.disambig_sigma;
}

// --extra-line NAME[:STRENGTH] (from the same --catalog): a further line in the Milne-Eddington window.
MeLine ResolveExtraLine(const MapArgs& a, const std::string& spec, WavelengthFrame data_frame) {
  const auto colon = spec.find(':');
  LineSelectionArgs l = a.line;
  l.line = spec.substr(0, colon);
  l.lower.clear();
  l.upper.clear();
  l.wavelength.clear();
  if (l.catalog.empty()) throw OptionError("--extra-line " + spec + " needs --catalog FILE (and --line for the main line)");
  const SelectedLine sel = ResolveLine(l);
  MeLine m;
  m.wavelength_nm = sel.rest_wavelength_nm;
  if (sel.frame && *sel.frame != data_frame) m.wavelength_nm = ConvertWavelength_nm(sel.rest_wavelength_nm, *sel.frame, data_frame);
  m.pattern = sel.pattern;
  if (colon != std::string::npos) {
    try {
      m.relative_strength = std::stod(spec.substr(colon + 1));
    } catch (const std::exception&) {
      throw OptionError("--extra-line " + spec + ": strength '" + spec.substr(colon + 1) + "' is not a number");
    }
  }
  return m;
}

// FNV-1a (64 bit) of the first and last 8 KiB of the cube's file, in hex: with the path and the size in the
// --resume fingerprint, a cube rewritten in place (same name and size, other data) is not resumed with rows
// of the old one; a row repaired in the middle (a damaged tile re-fetched) still is. "" when unreadable.
std::string CubeEndsDigest(std::string path) {
  namespace fs = std::filesystem;
  std::error_code ec;
  if (!fs::is_regular_file(path, ec) && !path.empty() && path.back() == ']')  // cube.fits[2]: the file
    path = path.substr(0, path.rfind('['));
  std::ifstream in(path, std::ios::binary);
  const auto size = static_cast<std::streamoff>(fs::file_size(path, ec));
  if (!in || ec) return "";
  constexpr std::streamoff kEnd = 8192;
  std::uint64_t h = 1469598103934665603ull;
  auto hash = [&](std::streamoff from, std::streamoff count) {
    std::string bytes(static_cast<std::size_t>(count), '\0');
    in.seekg(from);
    in.read(bytes.data(), count);
    for (char c : bytes) h = (h ^ static_cast<unsigned char>(c)) * 1099511628211ull;
  };
  hash(0, std::min(size, kEnd));
  if (size > kEnd) hash(std::max(kEnd, size - kEnd), std::min(kEnd, size - kEnd));
  char buf[17];
  std::snprintf(buf, sizeof buf, "%016llx", static_cast<unsigned long long>(h));
  return buf;
}

std::string JoinArgs(int argc, char** argv) {
  std::string s;
  for (int i = 0; i < argc; ++i) s += (i ? " " : "") + std::string(argv[i]);
  return s;
}

void RunMap(const MapArgs& a) {
  namespace fs = std::filesystem;
  const auto t_start = std::chrono::steady_clock::now();
  // Under MPI every rank does this set-up alone; a failure on any rank is agreed on before the distributed
  // run (AgreeOnSetup, cli/parallel.hpp): printed once, every rank exits with its code, no MPI_Abort.
  std::exception_ptr failure;
  std::unique_ptr<SelectedLine> line_ptr;
  std::unique_ptr<CubeReader> reader_ptr;
  std::unique_ptr<MapSetup> setup_ptr;
  try {
    if (a.output.empty()) throw OptionError("-o MAPS.fits is required");
    CheckOutputFile(a.output, a.overwrite, "-o");  // before any work (docs/cli.md, "Outputs")
    CheckOutputDirectory(a.png_dir, "--png");
    if (!a.png_dir.empty() && !a.overwrite) {
      // Refuse up front (before any work) if a quicklook this run would write already exists.
      std::vector<std::string> names{map_names::kMethod, map_names::kQuality};
      for (int s = 0; s < kSlotCount; ++s) names.push_back(MapSlotName(s));
      for (const auto& t : QuicklookTargets(a.output, a.png_dir, names))
        if (fs::exists(t)) throw OutputError(t + ": exists; use --overwrite to replace it (nothing was written)");
    }
    line_ptr = std::make_unique<SelectedLine>(ResolveLine(a.line));
    reader_ptr = std::make_unique<CubeReader>(a.cube, MapReadOptions(a));
    setup_ptr = std::make_unique<MapSetup>(MapOptionsFromArgs(a, *line_ptr, reader_ptr->info()));
  } catch (...) {
    failure = std::current_exception();
  }
  AgreeOnSetup(failure);
  const SelectedLine& line = *line_ptr;
  CubeReader& reader = *reader_ptr;
  const CubeInfo& info = reader.info();
  const MapSetup& setup = *setup_ptr;
  const FieldMapOptions& o = setup.options;
  const std::string& split_regime = setup.split_regime;

  std::ostringstream fp;
  fp.precision(17);
  std::error_code ec;
  fp << fs::absolute(a.cube, ec).string() << "|" << fs::file_size(fs::path(a.cube), ec) << "|"
     << CubeEndsDigest(a.cube) << "|" << a.method << "|"
     << o.rest_wavelength_nm << "|" << o.pattern.g_eff << "|" << o.pattern.G << "|" << o.window_halfwidth_nm << "|"
     << o.continuum_exclude_nm << "|" << o.noise_rel << "|" << a.transverse << "|" << o.core_halfwidth_nm << "|"
     << o.wing_start_nm << "|" << o.weak_ratio << "|" << o.resolution_ratio << "|" << o.detection_sigma << "|"
     << a.v_sign << "|" << a.fix << "|" << a.free << "|" << a.bounds << "|" << a.stokes_weights << "|" << a.restarts
     << "|" << a.max_iterations << "|" << a.bad_chi2 << "|" << a.mu << "|" << a.no_auto_me << "|"
     << o.mixed_from_gauss << "|" << o.transverse_detection << "|" << o.transverse_model_error << "|"
     << o.cog_model_error << "|"
     << o.consistency_sigma << "|" << a.tile_mib;
  for (const auto& e : a.extra_lines) fp << "|" << e;
  FieldMapRunOptions run;
  run.fingerprint = fp.str();
  run.resume = a.resume;
  if (a.resume) run.checkpoint_path = a.output + ".checkpoint";
  InterruptGuard interrupt;  // Ctrl-C stops the run between tiles
  run.cancel = interrupt.flag();
  const bool show_progress = !a.quiet && IsOutputRank() && isatty(STDERR_FILENO);
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
  if (!info.stokes.empty() && info.StokesIndex(StokesParameter::kQ) < 0 && !a.quiet && IsOutputRank())
    std::fprintf(stderr,
                 "zeeline: note: %s has no Stokes Q/U: no B_AZIM; B_LOS and V_LOS everywhere; B_TOTAL, B_INCL "
                 "and B_TRANS only where the sigma groups are resolved (split |B| with the centre-of-gravity "
                 "B_LOS). Without Q/U the weak-field regime is judged from B_LOS alone: a strong transverse field "
                 "it cannot see makes the weak-field B_LOS read low (measured: 4-5 %% at 0.3-1.5 kG, more for "
                 "stronger, nearly transverse fields), which B_LOS_SIGMA does not include (docs/methods.md)\n",
                 a.cube.c_str());

  FitsWriteOptions w;
  w.overwrite = a.overwrite;
  w.provenance.command_line = a.command_line;
  w.provenance.method = a.method;
  w.provenance.line = line.description;
  w.provenance.input = a.cube;
  w.provenance.history.push_back("rest wavelength used " + std::to_string(o.rest_wavelength_nm) + " nm (" +
                                 ToString(info.frame) + ")");
  for (const MeLine& l : o.extra_lines)
    w.provenance.history.push_back("extra line " + std::to_string(l.wavelength_nm) + " nm, relative strength " +
                                   std::to_string(l.relative_strength));
  if (o.disambiguate)
    w.provenance.history.push_back("B_AZIM disambiguated (acute angle to the potential field), range [0, 360) deg");
  // The maps go into the file as their rows are finished (rank 0 writes under MPI); the file appears under
  // its name only when complete. With --resume it is built as OUTPUT.partial and kept for the next run.
  // The file is created (or reopened) when the run begins; under MPI a failure there reaches every rank
  // with its exit code (mpi_backend.cpp).
  std::unique_ptr<MapFileSink> sink;
  if (IsOutputRank())
    sink = std::make_unique<MapFileSink>(a.output, MapHduLayout(info.nx, info.ny, o), info.spatial_wcs_header, w,
                                         a.resume ? a.output + ".partial" : std::string());
  run.sink = sink.get();

  FieldMaps maps;
  std::string ranks_summary;
  const RunStatus status = ComputeMapsOnAllRanks(reader, o, run, a.rows_per_task, maps, ranks_summary);
  if (status == RunStatus::kCancelled) {
    if (sink) sink->Abandon();  // std::exit below runs no destructors
    if (IsOutputRank())
      std::fprintf(stderr, "\nzeeline: interrupted; no map file was written%s\n",
                   a.resume ? (" (checkpoint " + run.checkpoint_path + " kept for --resume)").c_str() : "");
    StopParallel();
    std::exit(130);
  }
  if (!IsOutputRank()) return;  // MPI: rank 0 wrote the maps
  // Shown with -q too: it says how far the error bars can be trusted.
  if (const std::string few = FewContinuumNotice(maps, o.noise_rel); !few.empty()) Notice(few);

  const auto t_write = std::chrono::steady_clock::now();
  const long flagged = static_cast<long>(maps.flagged_pixels);
  // The checkpoint goes first: Commit rewrites B_AZIM of the partial file with the disambiguated azimuth, so
  // if closing or renaming then fails, a later --resume must not read those rows back as raw azimuths.
  if (a.resume) fs::remove(run.checkpoint_path, ec);
  const std::size_t n_images = sink->Commit(maps);
  const auto seconds = [](std::chrono::steady_clock::time_point t0, std::chrono::steady_clock::time_point t1) {
    return std::chrono::duration<double>(t1 - t0).count();
  };
  const auto t_written = std::chrono::steady_clock::now();
  const double total_s = seconds(t_start, t_written), end_s = seconds(t_write, t_written);
  std::vector<std::string> pngs;
  if (!a.png_dir.empty()) {
    QuicklookOptions q;
    q.overwrite = a.overwrite;
    pngs = RenderQuicklooks(a.output, a.png_dir, q, a.cube);  // truth maps of a simulated cube, if any
  }

  if (!a.quiet) {
    std::printf("maps: %s (%ld x %ld pixels, %zu HDUs)\n", a.output.c_str(), maps.nx, maps.ny, n_images + 1);
    std::printf("line: %s\n", line.description.c_str());
    if (!split_regime.empty()) std::printf("split: %s\n", split_regime.c_str());
    std::printf("method per pixel: wfa %lld, cog %lld, split %lld, me %lld; pixels with QUALITY flags: %ld\n",
                static_cast<long long>(maps.method_counts[1]), static_cast<long long>(maps.method_counts[2]),
                static_cast<long long>(maps.method_counts[3]), static_cast<long long>(maps.method_counts[4]), flagged);
    if (maps.method_counts[4] > 0)  // the checkpoint keeps the iteration count too
      std::printf("me: %.1f iterations per pixel on average\n",
                  static_cast<double>(maps.me_iterations) / static_cast<double>(maps.method_counts[4]));
    if (!ranks_summary.empty()) std::printf("%s\n", ranks_summary.c_str());
    if (!pngs.empty()) std::printf("quicklook: %s (and %zu per-map PNGs)\n", pngs.back().c_str(), pngs.size() - 1);
    // Where the time went, up to the map file being written (docs/methods.md, "What the speed depends on").
    // Reading runs on its own thread behind the estimators; only the part they waited for counts as
    // reading time here, the hidden rest is shown in brackets.
    // Writing: the rows handed to the file during the run and the end (disambiguated rows, close, rename).
    const double pct = total_s > 0.0 ? 100.0 / total_s : 0.0;
    const double write_s = maps.sink_seconds + end_s;
    const double other_s = std::max(total_s - maps.read_wait_seconds - maps.compute_seconds - write_s, 0.0);
    std::printf("speed: %lld pixels in %.3f s = %.0f pixels/s; reading %.0f %%, computing %.0f %%, writing %.0f %%, "
                "set-up %.0f %% (reading %.3f s in all, %.3f s of it behind the computation)\n",
                static_cast<long long>(maps.nx * maps.ny), total_s,
                total_s > 0.0 ? static_cast<double>(maps.nx * maps.ny) / total_s : 0.0, maps.read_wait_seconds * pct,
                maps.compute_seconds * pct, write_s * pct, other_s * pct, maps.read_seconds,
                std::max(maps.read_seconds - maps.read_wait_seconds, 0.0));
  }
}

}  // namespace

void AddMapComputeOptions(CLI::App* cmd, MapArgs& a) {
  AddLineSelectionOptions(cmd, a.line, "default: the frame of the cube's spectral axis");
  cmd->add_option("--method", a.method, "wfa | cog | split | me | auto")->capture_default_str();
  cmd->add_option("--window", a.window, "half-width of the fit window around the line, e.g. 0.012nm (default: from the mean line profile)");
  cmd->add_option("--continuum-exclude", a.continuum_exclude, "continuum = samples farther than this from the line (default: the window)");
  cmd->add_option("--noise", a.noise, "noise in units of the continuum (default: measured in the continuum)");
  cmd->add_option("--transverse", a.transverse,
                  "weak-field B_TRANS form: corrected (whole line, saturation-corrected) | core | wings | core+wings | whole")
      ->capture_default_str();
  cmd->add_option("--core", a.core, "weak-field core half-width, e.g. 0.006nm");
  cmd->add_option("--wing-start", a.wing_start, "weak-field wing region start from line centre, e.g. 0.008nm (default 4.8 Doppler widths)");
  cmd->add_option("--weak-ratio", a.weak_ratio, "weak-field regime: r = g_eff*dlambda_B/w_D below this (w_D = Doppler width from the line core), docs/methods.md")->capture_default_str();
  cmd->add_option("--resolution-ratio", a.resolution_ratio, "splitting/width above which sigma groups are resolved")->capture_default_str();
  cmd->add_option("--detection-sigma", a.detection_sigma, "LOW_SIGNAL below this many sigma")->capture_default_str();
  cmd->add_option("--transverse-detection", a.transverse_detection,
                  "LOW_TRANSVERSE where B_T^2 (weak-field or Milne-Eddington) is below this many of its sigma")
      ->capture_default_str();
  cmd->add_option("--transverse-model-error", a.transverse_model_error,
                  "model accuracy of the saturation-corrected weak-field B_T as a fraction of B_T, added in quadrature "
                  "to B_TRANS_SIGMA (docs/methods.md); 0 = noise only")
      ->capture_default_str();
  cmd->add_option("--cog-model-error", a.cog_model_error,
                  "model accuracy of the centre-of-gravity B_LOS as a fraction of |B_LOS|, added in quadrature to "
                  "B_LOS_SIGMA where it is used (cog and split pixels; docs/methods.md); 0 = noise only")
      ->capture_default_str();
  cmd->add_option("--shape-test-sigma", a.shape_test_sigma,
                  "weak-field model rejected (MODEL_MISMATCH / not weak) where its chi2 exceeds 1 by this many sigma")
      ->capture_default_str();
  cmd->add_option("--v-sign", a.v_sign, "+1, or -1 for data using the IAU 1974 sign of V (docs/conventions.md)")->capture_default_str();
  cmd->add_flag("--require-transverse", a.require_transverse, "refuse cubes without Stokes Q and U");
  cmd->add_option("--threads", a.threads, "worker threads (0 = all cores; under mpirun per rank: the node's cores shared by its ranks)")->capture_default_str();
  cmd->add_option("--tile-mib", a.tile_mib,
                  "memory for one tile of the cube in MiB (the spectral window comes from the first tile)")
      ->capture_default_str();
  cmd->add_option("--fix", a.fix, "me: fix parameters, e.g. fill=1,damping=0.15 (fill is fixed at 1 by default)");
  cmd->add_option("--free", a.free, "me: free parameters, e.g. fill");
  cmd->add_option("--bounds", a.bounds, "me: bounds, e.g. b_total=0:4000,v_los=-10:10");
  cmd->add_option("--stokes-weights", a.stokes_weights, "me: weights of I,Q,U,V in chi2, e.g. 1,4,4,2");
  cmd->add_option("--extra-line", a.extra_lines,
                  "me: another line of the --catalog in the window, NAME[:RELATIVE_STRENGTH] (repeatable)");
  cmd->add_option("--restarts", a.restarts, "me: extra starts when the reduced chi2 stays above 2 (0-4)")->capture_default_str();
  cmd->add_option("--max-iterations", a.max_iterations, "me: Levenberg-Marquardt steps per start")->capture_default_str();
  cmd->add_option("--bad-chi2", a.bad_chi2, "me: reduced chi2 above which QUALITY gets BAD_FIT")->capture_default_str();
  cmd->add_option("--mu", a.mu, "me: cos(heliocentric angle) of the observation")->capture_default_str();
  cmd->add_flag("--no-auto-me", a.no_auto_me, "auto: use cog instead of me where wfa and split are invalid");
  cmd->add_flag("--disambiguate", a.disambiguate,
                "resolve the 180-deg azimuth ambiguity (acute angle to the potential field; B_AZIM in [0, 360), AZIM_PICK map)");
  cmd->add_option("--smooth-azimuth", a.smooth_azimuth, "disambiguation: neighbour-consistency passes (0-20)")->capture_default_str();
  cmd->add_option("--disambig-sigma", a.disambig_sigma, "disambiguation: B_TRANS/error below which a pixel is flagged weak")->capture_default_str();
}

CubeReadOptions MapReadOptions(const MapArgs& a) {
  CubeReadOptions read;
  read.v_sign = a.v_sign;
  read.max_tile_mib = a.tile_mib;
  read.threads = a.threads > 0 ? a.threads : DefaultThreads();  // the reorder uses the estimators' threads
  const std::string bad_read = read.Validate();
  if (!bad_read.empty()) throw OptionError(bad_read);
  return read;
}

MapSetup MapOptionsFromArgs(const MapArgs& a, const SelectedLine& line, const CubeInfo& info) {
  MapSetup setup;
  FieldMapOptions& o = setup.options;
  o.method = MapMethodFromString(a.method);
  o.pattern = line.pattern;
  std::string& split_regime = setup.split_regime;  // beyond the linear regime: from the line list's term energies (docs/methods.md)
  if (const auto mixed = ResolveMixedLine(line, a.line, RegimeArgs{})) {
    const double bd = LinearBreakdownField_gauss(*mixed);
    if (std::isfinite(bd)) {
      o.mixed_splitting = std::make_shared<const SigmaSplittingTable>(*mixed);
      o.mixed_from_gauss = 0.1 * bd;
      char buf[200];
      std::snprintf(buf, sizeof buf, "mixed-regime (Paschen-Back) sigma separation above %.4g G (a tenth of the "
                    "linear breakdown field %.4g G)", o.mixed_from_gauss, bd);
      split_regime = buf;
    }
  }
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
  o.transverse_detection = a.transverse_detection;
  o.transverse_model_error = a.transverse_model_error;
  o.cog_model_error = a.cog_model_error;
  o.consistency_sigma = a.shape_test_sigma;
  o.need_transverse = a.require_transverse;
  o.threads = a.threads > 0 ? a.threads : DefaultThreads();  // under MPI: the node's cores shared by its ranks
  ApplyMeOptions(a, o);
  for (const std::string& spec : a.extra_lines) o.extra_lines.push_back(ResolveExtraLine(a, spec, info.frame));
  const std::string bad = o.Validate();
  if (!bad.empty()) throw OptionError(bad);

  return setup;
}

std::vector<ImageHdu> MapHduLayout(long nx, long ny, const FieldMapOptions& o) {
  std::vector<ImageHdu> hdus;
  for (int s = 0; s < kSlotCount; ++s) hdus.push_back(MakeMap(MapSlotName(s), nx, ny, {}));
  for (ImageHdu& h : hdus)
    if (h.extname == map_names::kAzimuth) {  // for readers and the quicklooks
      h.keywords.push_back({"AZRANGE", static_cast<long long>(o.disambiguate ? 360 : 180),
                            o.disambiguate ? "B_AZIM in [0, 360) deg: disambiguated" : "B_AZIM in [0, 180) deg: 180 deg ambiguous"});
      h.keywords.push_back({"DETSIG", o.detection_sigma, "B_TRANS detection threshold in sigma"});
    } else if (h.extname == MapSlotName(kSlotBtransErr)) {
      h.keywords.push_back({"BTMODERR", o.transverse_model_error, "weak-field B_T model error, fraction of B_T"});
    } else if (h.extname == MapSlotName(kSlotBlosErr)) {
      h.keywords.push_back({"COGMODER", o.cog_model_error, "centre-of-gravity B_LOS model error, fraction"});
    }
  ImageHdu method = MakeMap(map_names::kMethod, nx, ny, {});
  method.type = FitsPixelType::kInt16;
  method.keywords.push_back({"METH1", std::string("wfa"), "weak-field approximation"});
  method.keywords.push_back({"METH2", std::string("cog"), "centre of gravity"});
  method.keywords.push_back({"METH3", std::string("split"), "resolved splitting"});
  method.keywords.push_back({"METH4", std::string("me"), "Milne-Eddington inversion"});
  hdus.push_back(method);
  if (o.disambiguate) {
    ImageHdu d = MakeMap("AZIM_PICK", nx, ny, {});
    d.type = FitsPixelType::kInt16;
    d.bunit.clear();
    d.keywords.push_back({"AZPICK0", std::string("none"), "no azimuth"});
    d.keywords.push_back({"AZPICK1", std::string("acute"), "acute angle to the potential field"});
    d.keywords.push_back({"AZPICK2", std::string("weak"), "acute angle, B_TRANS below threshold"});
    d.keywords.push_back({"AZPICK3", std::string("smoothed"), "flipped by the smoothness pass"});
    hdus.push_back(d);
  }
  ImageHdu quality = MakeMap(map_names::kQuality, nx, ny, {});
  quality.type = FitsPixelType::kInt32;
  // QBITn names bit n (value 2^n) with the library's list (io/quality_flags.hpp, docs/fits.md).
  for (int b = 0; b < 31; ++b) {
    const std::vector<std::string> name = QualityBitNames(1u << b);
    if (name.empty() || name[0] == "UNKNOWN") continue;
    quality.keywords.push_back({"QBIT" + std::to_string(b), name[0], "QUALITY bit " + std::to_string(b) +
                                                                         " (value " + std::to_string(1u << b) + ")"});
  }
  hdus.push_back(quality);
  return hdus;
}

std::string FewContinuumNotice(const FieldMaps& maps, double given_noise_rel) {
  if (given_noise_rel > 0.0 || maps.continuum_samples == 0 || maps.continuum_samples >= kFewContinuumSamples)
    return {};
  return "zeeline: warning: each pixel's noise, and so every error bar, comes from only " +
         std::to_string(maps.continuum_samples) + " continuum samples (fewer than " +
         std::to_string(kFewContinuumSamples) +
         "): the error bars themselves scatter and their pulls have wide tails (measured: B_LOS pull sd 1.43 "
         "from 12 samples, 1.05 from 24, 0.96 with the noise given); give the noise with --noise, or use a cube "
         "with more continuum on either side of the line (docs/methods.md)";
}

std::vector<ImageHdu> MapHdus(const FieldMaps& maps, const FieldMapOptions& o) {
  // Only the maps that carry information for this cube and method.
  std::vector<ImageHdu> hdus;
  for (ImageHdu& h : MapHduLayout(maps.nx, maps.ny, o)) {
    int slot = -1;
    for (int s = 0; s < kSlotCount; ++s)
      if (h.extname == MapSlotName(s)) slot = s;
    if (slot >= 0) {
      const auto& v = maps.slots[static_cast<std::size_t>(slot)];
      if (std::none_of(v.begin(), v.end(), [](float x) { return std::isfinite(x); })) continue;
    } else if (h.extname != map_names::kMethod && h.extname != map_names::kQuality) {  // AZIM_PICK
      if (maps.disambiguation.empty()) continue;
    }
    hdus.push_back(std::move(h));
  }
  return hdus;
}

void AddMapCommand(CLI::App& app, int argc, char** argv) {
  auto a = std::make_shared<MapArgs>();
  a->command_line = JoinArgs(argc, argv);
  auto* cmd = app.add_subcommand("map", "Field maps (B_LOS, B_TRANS, B_TOTAL, B_INCL, B_AZIM, V_LOS + errors) from a Stokes cube");
  cmd->footer(
      "Methods: wfa (weak field), cog (centre of gravity), split (resolved splitting), me (Milne-Eddington\n"
      "inversion, docs/me_inversion.md), auto (per pixel, recorded in the METHOD map; thresholds in docs/methods.md).\n"
      "ME parameter names: field inclination azimuth vlos doppler_width damping eta0 s0 s1 fill.\n"
      "Examples:\n"
      "  zeeline map cube.fits --lower 5P1 --upper 5D0 --wavelength 630.2494nm --frame air -o maps.fits\n"
      "  zeeline map cube.fits --line FeI_6302 --catalog demo_maps/lines.csv --method wfa --png quicklook/ -o maps.fits\n"
      "  zeeline map cube.fits --line FeI_6302 --catalog demo_maps/lines.csv --method me --fix damping=0.15 \\\n"
      "      --extra-line FeI_6301:3 --disambiguate -o maps.fits");
  cmd->add_option("cube", a->cube, "Stokes cube (FITS; cube.fits[2] or cube.fits[EXTNAME] picks an HDU)")->required();
  cmd->add_option("-o,--output", a->output, "output map file (FITS)")->required();
  AddMapComputeOptions(cmd, *a);
  cmd->add_option("--rows-per-task", a->rows_per_task,
                  "under mpirun: spatial rows per unit of work handed to a rank (0 = guided: large first, small last; docs/scaling.md)")
      ->capture_default_str()
      ->check(CLI::NonNegativeNumber);
  cmd->add_option("--png", a->png_dir, "also write quicklook PNGs into this directory");
  cmd->add_flag("--overwrite", a->overwrite, "replace an existing output file");
  cmd->add_flag("--resume", a->resume, "keep a checkpoint (OUTPUT.checkpoint) and continue an interrupted run from it");
  cmd->add_flag("-q,--quiet", a->quiet, "no progress bar or summary");
  cmd->callback([a] { RunMap(*a); });
}

}  // namespace zeeline::cli
