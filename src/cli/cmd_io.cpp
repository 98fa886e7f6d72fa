// `zeeline info` (what the cube reader understood) and `zeeline view` (quicklook PNGs of a map file).
#include <cstdio>
#include <filesystem>
#include <iostream>
#include <memory>
#include <string>
#include <variant>
#include <vector>

#include "cli/commands.hpp"
#include "cli/json_writer.hpp"
#include "cli/output_paths.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/wavelength_frame.hpp"
#include "zeeline/io/cube_reader.hpp"
#include "zeeline/io/field_map_writer.hpp"
#include "zeeline/io/quicklook.hpp"

namespace zeeline::cli {
namespace {

// ---------------------------------------------------------------------------- info
struct InfoArgs {
  std::string cube;
  std::string frame;
  bool json = false;
  bool no_scan = false;
};

std::vector<std::string> WcsCards(const std::string& header) {
  std::vector<std::string> out;
  for (std::size_t i = 0; i + 80 <= header.size(); i += 80) {
    std::string card = header.substr(i, 80);
    card.erase(card.find_last_not_of(' ') + 1);
    if (!card.empty()) out.push_back(card);
  }
  return out;
}

void PrintInfoJson(const CubeInfo& info) {
  JsonWriter w(std::cout);
  w.BeginObject();
  w.Key("file").Value(info.path).Key("hdu").Value(info.hdu).Key("extname").Value(info.extname);
  w.Key("bitpix").Value(info.bitpix);
  w.Key("axes").BeginArray();
  for (const auto& a : info.axes) {
    w.BeginObject().Key("naxis").Value(a.fits_axis).Key("size").Value(static_cast<long long>(a.size));
    w.Key("role").Value(ToString(a.role)).Key("ctype").Value(a.ctype).Key("cunit").Value(a.cunit).EndObject();
  }
  w.EndArray();
  w.Key("nx").Value(static_cast<long long>(info.nx)).Key("ny").Value(static_cast<long long>(info.ny));
  w.Key("spectral_ctype").Value(info.spectral_ctype);
  w.Key("file_frame").Value(ToString(info.file_frame)).Key("frame").Value(ToString(info.frame));
  w.Key("spectral_reversed").Value(info.spectral_reversed);
  w.Key("wavelength_nm").Array(info.wavelength_nm);
  w.Key("stokes").BeginArray();
  for (auto s : info.stokes) w.Value(ToString(s));
  w.EndArray();
  w.Key("spatial_wcs").BeginArray();
  for (const auto& c : WcsCards(info.spatial_wcs_header)) w.Value(c);
  w.EndArray();
  if (info.statistics) {
    const auto& st = *info.statistics;
    w.Key("statistics").BeginObject();
    w.Key("min").Value(st.min).Key("max").Value(st.max);
    w.Key("finite_samples").Value(static_cast<long long>(st.finite_samples));
    w.Key("nan_samples").Value(static_cast<long long>(st.nan_samples));
    w.Key("inf_samples").Value(static_cast<long long>(st.inf_samples));
    w.Key("pixels_with_nonfinite").Value(static_cast<long long>(st.pixels_with_nonfinite));
    w.Key("per_stokes").BeginObject();
    for (std::size_t s = 0; s < info.stokes.size(); ++s) {
      w.Key(ToString(info.stokes[s])).BeginObject().Key("min").Value(st.min_per_stokes[s]);
      w.Key("max").Value(st.max_per_stokes[s]).EndObject();
    }
    w.EndObject().EndObject();
  }
  w.EndObject();
  std::cout << "\n";
}

void PrintInfoText(const CubeInfo& info) {
  std::printf("file         %s (HDU %d%s)\n", info.path.c_str(), info.hdu,
              info.extname.empty() ? "" : (", EXTNAME '" + info.extname + "'").c_str());
  std::printf("BITPIX       %d\n", info.bitpix);
  std::printf("axes\n");
  for (const auto& a : info.axes) {
    std::printf("  NAXIS%d = %-7ld %-9s CTYPE%d = '%s'%s\n", a.fits_axis, a.size, ToString(a.role).c_str(), a.fits_axis,
                a.ctype.c_str(), a.cunit.empty() ? "" : ("  CUNIT = '" + a.cunit + "'").c_str());
  }
  std::printf("spatial      %ld x %ld pixels (x = NAXIS%d, y = NAXIS%d)\n", info.nx, info.ny, info.x_axis + 1,
              info.y_axis + 1);
  const auto& wl = info.wavelength_nm;
  const double step = wl.size() > 1 ? (wl.back() - wl.front()) / static_cast<double>(wl.size() - 1) : 0.0;
  std::printf("spectral     %zu points, %.6f .. %.6f nm, mean step %.6g nm, %s wavelengths%s (file: %s, %s)\n",
              wl.size(), wl.front(), wl.back(), step, ToString(info.frame).c_str(),
              info.frame != info.file_frame ? " (converted)" : "", info.spectral_ctype.c_str(),
              info.spectral_reversed ? "stored decreasing, reversed on read" : "stored increasing");
  std::string stokes;
  for (auto s : info.stokes) stokes += (stokes.empty() ? "" : " ") + ToString(s);
  std::printf("stokes       %s\n", stokes.c_str());
  std::printf("spatial WCS\n");
  for (const auto& c : WcsCards(info.spatial_wcs_header)) std::printf("  %s\n", c.c_str());
  if (info.statistics) {
    const auto& st = *info.statistics;
    std::printf("data range   %.6g .. %.6g (%lld finite samples)\n", st.min, st.max,
                static_cast<long long>(st.finite_samples));
    for (std::size_t s = 0; s < info.stokes.size(); ++s)
      std::printf("  %s          %.6g .. %.6g\n", ToString(info.stokes[s]).c_str(), st.min_per_stokes[s],
                  st.max_per_stokes[s]);
    std::printf("non-finite   %lld NaN, %lld Inf samples; %lld pixels affected\n",
                static_cast<long long>(st.nan_samples), static_cast<long long>(st.inf_samples),
                static_cast<long long>(st.pixels_with_nonfinite));
  }
}

void RunInfo(const InfoArgs& a) {
  CubeReadOptions o;
  if (!a.frame.empty()) o.frame = WavelengthFrameFromString(a.frame);
  o.scan_statistics = !a.no_scan;
  const CubeInfo info = ReadCubeInfo(a.cube, o);
  if (a.json) PrintInfoJson(info);
  else PrintInfoText(info);
}

// ---------------------------------------------------------------------------- view
struct ViewArgs {
  std::string maps, truth;
  std::string out_dir;
  std::vector<double> percentiles;
  bool overwrite = false;
};

std::string Lower(std::string s) {
  for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

void RunView(const ViewArgs& a) {
  QuicklookOptions q;
  q.overwrite = a.overwrite;
  if (!a.percentiles.empty()) {
    if (a.percentiles.size() != 2) throw OptionError("--percentiles: give two values, e.g. 1,99");
    q.lower_percentile = a.percentiles[0];
    q.upper_percentile = a.percentiles[1];
  }
  const std::string problem = q.Validate();
  if (!problem.empty()) throw OptionError("--percentiles: " + problem);
  CheckOutputDirectory(a.out_dir, "-o");
  for (const auto& t : RenderQuicklooks(a.maps, a.out_dir, q, a.truth)) std::printf("%s\n", t.c_str());
}

}  // namespace

std::vector<std::string> QuicklookTargets(const std::string& maps_path, const std::string& out_dir,
                                          const std::vector<std::string>& extnames) {
  namespace fs = std::filesystem;
  const fs::path input(maps_path);
  const fs::path dir = out_dir.empty() ? (input.has_parent_path() ? input.parent_path() : fs::path(".")) : fs::path(out_dir);
  const std::string stem = input.stem().string();
  std::vector<std::string> targets;
  for (const auto& name : extnames) targets.push_back((dir / (stem + "_" + Lower(name) + ".png")).string());
  targets.push_back((dir / (stem + "_summary.png")).string());
  return targets;
}

std::vector<std::string> RenderQuicklooks(const std::string& maps_path, const std::string& out_dir,
                                          const QuicklookOptions& q, const std::string& truth_path) {
  namespace fs = std::filesystem;
  std::vector<ImageHdu> hdus = ReadImageHdus(maps_path);  // FitsError -> exit 1
  if (hdus.empty()) throw FitsError("'" + maps_path + "': no 2-D image HDU to render");
  // Truth maps (TRUE_<NAME> of a simulated cube) go right after the result they describe.
  if (!truth_path.empty()) {
    std::vector<ImageHdu> with_truth;
    const std::vector<ImageHdu> truth = ReadImageHdus(truth_path);
    for (auto& h : hdus) {
      const std::string name = h.extname;
      with_truth.push_back(std::move(h));
      for (const auto& t : truth)
        if (t.extname == "TRUE_" + name && t.naxes == with_truth.back().naxes) with_truth.push_back(t);
    }
    hdus = std::move(with_truth);
  }
  std::vector<std::string> names;
  for (const auto& h : hdus) names.push_back(h.extname);
  const std::vector<std::string> targets = QuicklookTargets(maps_path, out_dir, names);
  const std::string& sheet = targets.back();
  // Refuse before writing anything, so a refused run leaves no partial set of pictures.
  if (!q.overwrite) {
    std::string existing;
    for (const auto& t : targets)
      if (fs::exists(t)) existing += (existing.empty() ? "" : ", ") + t;
    if (!existing.empty()) throw OutputError("would overwrite " + existing + " (use --overwrite)");
  }
  const fs::path dir = fs::path(sheet).parent_path();
  CheckOutputDirectory(dir.string(), "quicklook directory");
  CreateOutputDirectory(dir.string(), "quicklook directory");

  std::vector<QuicklookMap> maps;
  for (const auto& h : hdus) maps.push_back(QuicklookFromHdu(h));
  auto find = [&](const std::string& name) -> int {
    for (std::size_t i = 0; i < hdus.size(); ++i)
      if (hdus[i].extname == name) return static_cast<int>(i);
    return -1;
  };
  // The azimuth of a transverse field below its detection threshold is noise: faded.
  const int az = find(map_names::kAzimuth), bt = find(map_names::kBtrans);
  const int bts = find(std::string(map_names::kBtrans) + map_names::kErrorSuffix);
  if (az >= 0 && bt >= 0 && bts >= 0) {
    double k = 3.0;
    for (const auto& kw : hdus[static_cast<std::size_t>(az)].keywords)
      if (kw.key == "DETSIG" && std::holds_alternative<double>(kw.value)) k = std::get<double>(kw.value);
    FadeWeakAzimuth(maps[static_cast<std::size_t>(az)], hdus[static_cast<std::size_t>(bt)].values,
                    hdus[static_cast<std::size_t>(bts)].values, k);
  }
  // A truth map and its result share one colour scale.
  for (std::size_t i = 0; i < hdus.size(); ++i) {
    const int t = find("TRUE_" + hdus[i].extname);
    if (t >= 0 && maps[i].categories.empty()) ShareColourLimits({&maps[i], &maps[static_cast<std::size_t>(t)]}, q);
  }
  try {
    for (std::size_t i = 0; i < maps.size(); ++i) WriteMapPng(targets[i], maps[i], q);
    WriteSummaryPng(sheet, maps, fs::path(maps_path).filename().string(), q);
  } catch (const FitsError& e) {
    throw OutputError(e.what());
  }
  return targets;
}

void AddInfoCommand(CLI::App& app) {
  auto args = std::make_shared<InfoArgs>();
  auto* cmd = app.add_subcommand("info", "Describe a Stokes cube as zeeline reads it (axes, wavelengths, Stokes, WCS, data range)");
  cmd->footer(
      "The cube may be the primary HDU or an extension: cube.fits[2] or cube.fits[EXTNAME].\n"
      "Examples:\n"
      "  zeeline info scan.fits\n"
      "  zeeline info 'scan.fits[STOKES]' --frame vacuum --json");
  cmd->add_option("cube", args->cube, "Stokes cube (FITS)")->required();
  cmd->add_option("--frame", args->frame, "report wavelengths in this frame: air | vacuum (default: the file's)");
  cmd->add_flag("--no-scan", args->no_scan, "skip the pass over the data (no data range or NaN count)");
  cmd->add_flag("--json", args->json, "machine-readable output (keys: axes, wavelength_nm, stokes, statistics)");
  cmd->callback([args] { RunInfo(*args); });
}

void AddViewCommand(CLI::App& app) {
  auto args = std::make_shared<ViewArgs>();
  auto* cmd = app.add_subcommand("view", "Quicklook PNGs of every 2-D map in a FITS file, plus a summary sheet");
  cmd->footer(
      "Writes DIR/<name>_<extname>.png per map and DIR/<name>_summary.png; prints their paths.\n"
      "Examples:\n"
      "  zeeline view maps.fits\n"
      "  zeeline view maps.fits -o quicklook --percentiles 2,98 --overwrite\n"
      "  zeeline view maps.fits --truth demo_maps/bipolar_region.fits -o compare");
  cmd->add_option("maps", args->maps, "map file (FITS, e.g. written by 'zeeline map')")->required();
  cmd->add_option("-o,--output-dir", args->out_dir, "directory for the PNG files (default: next to the input)");
  cmd->add_option("--truth", args->truth,
                  "a simulated cube: draw its TRUE_<NAME> maps next to NAME on the same colour scale");
  cmd->add_option("--percentiles", args->percentiles, "colour limits as two percentiles (default 1,99)")->delimiter(',');
  cmd->add_flag("--overwrite", args->overwrite, "replace existing PNG files");
  cmd->callback([args] { RunView(*args); });
}

}  // namespace zeeline::cli
