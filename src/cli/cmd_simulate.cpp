// `zeeline simulate`: a synthetic Stokes cube (with WCS and truth maps) from the demo scene or from maps of
// Milne–Eddington parameters. A thin layer over synth/scene.hpp and io/field_map_writer.hpp.
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/interrupt.hpp"
#include "cli/line_selection.hpp"
#include "cli/output_paths.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/io/field_map_writer.hpp"
#include "zeeline/synth/scene.hpp"

namespace zeeline::cli {
namespace {

struct SimulateArgs {
  bool demo = false;
  std::string params, output, range = "0.06nm", instrument_fwhm;
  LineSelectionArgs line;
  int points = 96, threads = 0;
  long nx = 48, ny = 40;
  double noise = 1e-3, mu = 1.0, pixel_arcsec = 0.5, x0_arcsec = 0.0, y0_arcsec = 0.0;
  unsigned long long seed = 1;
  bool overwrite = false, quiet = false;
  std::string command_line;
};

// Reads a parameter-map file: B_TOTAL, B_INCL, B_AZIM, V_LOS required; the other MeParameters optional.
Scene SceneFromParameterMaps(const std::string& path) {
  const std::vector<ImageHdu> hdus = ReadImageHdus(path);
  std::map<std::string, const ImageHdu*> by_name;
  for (const auto& h : hdus) by_name[h.extname] = &h;
  struct Entry {
    const char* extname;
    MeParam param;
    bool required;
    const char* unit;
  };
  const Entry entries[] = {{"B_TOTAL", MeParam::kField, true, "G"},
                           {"B_INCL", MeParam::kInclination, true, "deg"},
                           {"B_AZIM", MeParam::kAzimuth, true, "deg"},
                           {"V_LOS", MeParam::kVlos, true, "km/s"},
                           {"DOPPLER_WIDTH", MeParam::kDopplerWidth, false, "nm"},
                           {"DAMPING", MeParam::kDamping, false, ""},
                           {"ETA0", MeParam::kEta0, false, ""},
                           {"S0", MeParam::kS0, false, ""},
                           {"S1", MeParam::kS1, false, ""},
                           {"FILL", MeParam::kFill, false, ""}};
  Scene s;
  for (const auto& e : entries) {
    auto it = by_name.find(e.extname);
    if (it == by_name.end()) {
      if (e.required) throw FitsError(path + ": no image HDU with EXTNAME = '" + e.extname + "' (required parameter map)");
      continue;
    }
    const ImageHdu& h = *it->second;
    if (h.naxes.size() != 2)
      throw FitsError(path + "[" + e.extname + "]: expected a 2-D image, NAXIS = " + std::to_string(h.naxes.size()));
    if (!h.bunit.empty() && h.bunit != e.unit)
      throw FitsError(path + "[" + e.extname + "]: BUNIT = '" + h.bunit + "', expected '" + e.unit + "'");
    if (s.nx == 0) {
      s.nx = h.naxes[0];
      s.ny = h.naxes[1];
      s.primary.assign(static_cast<std::size_t>(s.nx * s.ny), MeParameters{});
    } else if (h.naxes[0] != s.nx || h.naxes[1] != s.ny) {
      throw FitsError(path + "[" + e.extname + "]: size " + std::to_string(h.naxes[0]) + " x " +
                      std::to_string(h.naxes[1]) + " differs from B_TOTAL's " + std::to_string(s.nx) + " x " +
                      std::to_string(s.ny));
    }
    for (std::size_t i = 0; i < h.values.size(); ++i) {
      if (!std::isfinite(h.values[i]))
        throw FitsError(path + "[" + e.extname + "]: pixel (" + std::to_string(i % s.nx) + ", " +
                        std::to_string(i / s.nx) + ") is not finite");
      s.primary[i].Set(e.param, h.values[i]);
    }
  }
  return s;
}

void RunSimulate(const SimulateArgs& a) {
  if (a.demo == !a.params.empty()) throw OptionError("give exactly one of --demo or --params PARAMS.fits");
  CheckOutputFile(a.output, a.overwrite, "-o");  // before any work (docs/cli.md, "Outputs")
  const SelectedLine line = ResolveLine(a.line);
  const WavelengthFrame frame = line.frame.value_or(WavelengthFrame::kVacuum);
  if (a.points < 16 || a.points > 100000) throw OptionError("--points = " + std::to_string(a.points) + " must be in [16, 100000]");
  const double range_nm = ParseWavelength_nm(a.range);

  Scene scene;
  if (a.demo) {
    DemoSceneOptions d;
    d.nx = a.nx;
    d.ny = a.ny;
    scene = MakeDemoScene(d);
  } else {
    scene = SceneFromParameterMaps(a.params);
  }
  SynthesisOptions so;
  so.me.mu = a.mu;
  if (!a.instrument_fwhm.empty()) so.instrument.gaussian_fwhm_nm = ParseWavelength_nm(a.instrument_fwhm);
  const std::string bad = so.Validate();
  if (!bad.empty()) throw OptionError(bad);
  SceneSynthesisOptions no;
  no.noise_rel = a.noise;
  no.seed = a.seed;
  no.threads = a.threads;
  InterruptGuard interrupt;  // Ctrl-C stops the synthesis; nothing is written
  no.cancel = interrupt.flag();

  MeLine me_line;
  me_line.wavelength_nm = line.rest_wavelength_nm;
  me_line.pattern = line.pattern;
  const Eigen::ArrayXd grid = UniformWavelengthGrid(line.rest_wavelength_nm, range_nm, a.points);
  StokesCubeData cube;
  cube.nx = scene.nx;
  cube.ny = scene.ny;
  cube.stokes = {StokesParameter::kI, StokesParameter::kQ, StokesParameter::kU, StokesParameter::kV};
  cube.values = SynthesizeScene(scene, {me_line}, grid, so, no);
  if (interrupt.interrupted()) {
    std::fprintf(stderr, "\nzeeline: interrupted; no cube was written (%s)\n", a.output.c_str());
    std::exit(130);
  }

  // Truth maps of the primary atmosphere (and the weight of two-component pixels). TRUE_B_AZIM is the
  // direction of the horizontal field on [0, 360), as a disambiguated B_AZIM map reports it. TRUE_B_LOS is
  // the weight-averaged line-of-sight field of both components, w B1 cos(g1) + (1 - w) B2 cos(g2): the
  // flux a weak-field or centre-of-gravity measurement of the mixed pixel sees.
  const std::size_t np = static_cast<std::size_t>(scene.nx * scene.ny);
  auto truth = [&](const char* name, const char* unit, auto f) {
    std::vector<double> v(np);
    for (std::size_t i = 0; i < np; ++i) v[i] = f(scene.primary[i]);
    ImageHdu h = MakeMap(name, scene.nx, scene.ny, std::move(v));
    h.bunit = unit;
    return h;
  };
  constexpr double kDeg = 3.14159265358979323846 / 180.0;
  auto blos = [&](const MeParameters& p) { return p.field_gauss * std::cos(p.inclination_deg * kDeg); };
  std::vector<ImageHdu> extra;
  extra.push_back(truth("TRUE_B_TOTAL", "G", [](const MeParameters& p) { return p.field_gauss; }));
  extra.push_back(truth("TRUE_B_INCL", "deg", [](const MeParameters& p) { return p.inclination_deg; }));
  extra.push_back(truth("TRUE_B_AZIM", "deg", [](const MeParameters& p) {
    const double a0 = std::fmod(p.azimuth_deg, 360.0);
    return a0 < 0 ? a0 + 360.0 : a0;
  }));
  {
    std::vector<double> v(np);
    for (std::size_t i = 0; i < np; ++i) {
      const double w = scene.primary_weight.empty() ? 1.0 : scene.primary_weight[i];
      v[i] = w * blos(scene.primary[i]) + (w < 1.0 ? (1.0 - w) * blos(scene.secondary[i]) : 0.0);
    }
    ImageHdu h = MakeMap("TRUE_B_LOS", scene.nx, scene.ny, std::move(v));
    h.bunit = "G";
    h.keywords.push_back({"COMMENT", std::string("w B1 cos(g1) + (1 - w) B2 cos(g2), w = TRUE_WEIGHT"), ""});
    extra.push_back(h);
  }
  extra.push_back(truth("TRUE_B_TRANS", "G", [&](const MeParameters& p) { return p.field_gauss * std::sin(p.inclination_deg * kDeg); }));
  extra.push_back(truth("TRUE_V_LOS", "km/s", [](const MeParameters& p) { return p.vlos_kms; }));
  extra.push_back(truth("TRUE_DOPPLER_WIDTH", "nm", [](const MeParameters& p) { return p.doppler_width_nm; }));
  extra.push_back(truth("TRUE_FILL", "", [](const MeParameters& p) { return p.fill; }));
  if (!scene.primary_weight.empty()) {
    ImageHdu w = MakeMap("TRUE_WEIGHT", scene.nx, scene.ny, scene.primary_weight);
    w.bunit = "";
    w.keywords.push_back({"COMMENT", std::string("weight of the primary atmosphere; 1 - weight has TRUE_V_LOS2"), ""});
    extra.push_back(w);
    std::vector<double> v2(np);
    for (std::size_t i = 0; i < np; ++i) v2[i] = scene.secondary[i].vlos_kms;
    ImageHdu h = MakeMap("TRUE_V_LOS2", scene.nx, scene.ny, std::move(v2));
    h.bunit = "km/s";
    extra.push_back(h);
  }

  FitsWriteOptions w;
  w.overwrite = a.overwrite;
  w.provenance.command_line = a.command_line;
  w.provenance.method = "simulate (Milne-Eddington, Unno-Rachkovsky)";
  w.provenance.line = line.description;
  w.provenance.input = a.demo ? std::string("built-in demo scene") : a.params;
  w.provenance.keywords.push_back({"ZLNOISE", a.noise, "noise sigma / continuum"});
  w.provenance.keywords.push_back({"ZLSEED", static_cast<long long>(a.seed), "noise seed"});
  w.provenance.keywords.push_back({"ZLMU", a.mu, "cos(heliocentric angle)"});
  std::vector<double> wl(grid.data(), grid.data() + grid.size());
  const std::string wcs = MakeHelioprojectiveWcs(scene.nx, scene.ny, a.pixel_arcsec, a.x0_arcsec, a.y0_arcsec);
  try {
    WriteStokesCube(a.output, cube, wl, frame, wcs, extra, w);
  } catch (const FitsError& e) {
    throw OutputError(e.what());  // checked up front; this is a failure while writing (exit 3)
  }
  if (!a.quiet)
    std::printf("cube: %s (%ld x %ld pixels, %d wavelengths %.5f-%.5f nm %s, Stokes IQUV, noise %.2g)\n",
                a.output.c_str(), scene.nx, scene.ny, a.points, wl.front(), wl.back(), ToString(frame).c_str(), a.noise);
}

}  // namespace

void AddSimulateCommand(CLI::App& app, int argc, char** argv) {
  auto a = std::make_shared<SimulateArgs>();
  for (int i = 0; i < argc; ++i) a->command_line += (i ? " " : "") + std::string(argv[i]);
  auto* cmd = app.add_subcommand("simulate", "Synthetic Stokes cube (Milne–Eddington) with truth maps, from the demo scene or parameter maps");
  cmd->footer(
      "The demo scene is an invented bipolar region (docs/demo.md). --params reads a FITS file with image\n"
      "HDUs B_TOTAL [G], B_INCL [deg], B_AZIM [deg], V_LOS [km/s] and optionally DOPPLER_WIDTH [nm],\n"
      "DAMPING, ETA0, S0, S1, FILL. Truth maps are written as TRUE_* HDUs after the cube.\n"
      "Examples:\n"
      "  zeeline simulate --demo --line FeI_6302 --catalog demo_maps/lines.csv -o demo_cube.fits\n"
      "  zeeline simulate --params truth.fits --lower 5P1 --upper 5D0 --wavelength 630.2494nm --frame air \\\n"
      "                --noise 5e-4 --seed 7 --instrument-fwhm 2.5pm -o cube.fits");
  cmd->add_flag("--demo", a->demo, "use the built-in demo scene");
  cmd->add_option("--params", a->params, "parameter maps (FITS)");
  cmd->add_option("-o,--output", a->output, "output cube (FITS)")->required();
  AddLineSelectionOptions(cmd, a->line, "default: vacuum (the cube's CTYPE3 is AWAV for air, WAVE for vacuum)");
  cmd->add_option("--range", a->range, "full spectral range, centred on the line")->capture_default_str();
  cmd->add_option("--points", a->points, "wavelength samples")->capture_default_str();
  cmd->add_option("--nx", a->nx, "demo scene width in pixels")->capture_default_str();
  cmd->add_option("--ny", a->ny, "demo scene height in pixels")->capture_default_str();
  cmd->add_option("--noise", a->noise, "noise sigma in units of the continuum")->capture_default_str();
  cmd->add_option("--seed", a->seed, "noise seed")->capture_default_str();
  cmd->add_option("--mu", a->mu, "cos(heliocentric angle)")->capture_default_str();
  cmd->add_option("--instrument-fwhm", a->instrument_fwhm, "Gaussian instrument profile FWHM, e.g. 2.5pm");
  cmd->add_option("--pixel-scale", a->pixel_arcsec, "arcsec per pixel of the helioprojective WCS")->capture_default_str();
  cmd->add_option("--x0", a->x0_arcsec, "pointing (arcsec) of the image centre, x")->capture_default_str();
  cmd->add_option("--y0", a->y0_arcsec, "pointing (arcsec) of the image centre, y")->capture_default_str();
  cmd->add_option("--threads", a->threads, "worker threads (0 = all cores)")->capture_default_str();
  cmd->add_flag("--overwrite", a->overwrite, "replace an existing output file");
  cmd->add_flag("-q,--quiet", a->quiet, "no summary line");
  cmd->callback([a] { RunSimulate(*a); });
}

}  // namespace zeeline::cli
