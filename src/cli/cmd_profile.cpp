// `zeeline profile`: synthetic Stokes profiles of one line from a Milne-Eddington atmosphere.
#include <cstdio>
#include <filesystem>
#include <iostream>
#include <memory>
#include <optional>
#include <string>

#include "cli/commands.hpp"
#include "cli/json_writer.hpp"
#include "cli/line_selection.hpp"
#include "cli/output_paths.hpp"
#include "synth/profile_plot.hpp"
#include "zeeline/atomic/lande.hpp"
#include "zeeline/atomic/level.hpp"
#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/synth/stokes_synthesizer.hpp"

namespace zeeline::cli {
namespace {

struct ProfileArgs {
  LineSelectionArgs line;
  std::string field = "0G";
  double inclination_deg = 0.0;
  double azimuth_deg = 0.0;
  std::string vlos = "0";
  std::string doppler_width = "0.003nm";
  double damping = 0.1;
  double eta0 = 5.0;
  double s0 = 0.3;
  double s1 = 0.7;
  double mu = 1.0;
  double fill = 1.0;
  std::string range = "0.05nm";
  int points = 201;
  std::string instrument_fwhm;
  std::string macroturbulence;
  std::string voigt = "fast";
  std::string png;
  bool overwrite = false;
  bool json = false;
};

// The option of `profile` for each model parameter, to name it in messages.
const char* ProfileOption(MeParam p) {
  switch (p) {
    case MeParam::kField: return "--field";
    case MeParam::kInclination: return "--inclination";
    case MeParam::kAzimuth: return "--azimuth";
    case MeParam::kVlos: return "--vlos";
    case MeParam::kDopplerWidth: return "--doppler-width";
    case MeParam::kDamping: return "--damping";
    case MeParam::kEta0: return "--eta0";
    case MeParam::kS0: return "--s0";
    case MeParam::kS1: return "--s1";
    case MeParam::kFill: return "--fill";
  }
  return "?";
}

void RunProfile(const ProfileArgs& a) {
  const SelectedLine selected = ResolveLine(a.line);
  MeLine line;
  line.wavelength_nm = selected.rest_wavelength_nm;
  if (!(line.wavelength_nm > 0.0)) throw OptionError("--wavelength " + a.line.wavelength + " must be positive");
  line.pattern = selected.pattern;

  MeParameters p;
  p.field_gauss = ParseFieldStrength_gauss(a.field, "--field");
  p.inclination_deg = a.inclination_deg;
  p.azimuth_deg = a.azimuth_deg;
  p.vlos_kms = ParseVelocity_kms(a.vlos);
  p.doppler_width_nm = ParseWavelength_nm(a.doppler_width);
  p.damping = a.damping;
  p.eta0 = a.eta0;
  p.s0 = a.s0;
  p.s1 = a.s1;
  p.fill = a.fill;
  const std::string problem = p.Validate();
  if (!problem.empty()) {
    std::string option;
    for (int k = 0; k < kMeParamCount; ++k)
      if (problem.rfind(MeParamName(static_cast<MeParam>(k)), 0) == 0) option = ProfileOption(static_cast<MeParam>(k));
    throw OptionError(option + ": model parameter " + problem);
  }

  if (a.points < 2 || a.points > 10000000)
    throw OptionError("--points " + std::to_string(a.points) + " is outside the allowed range [2, 1e7]");
  const double range_nm = ParseWavelength_nm(a.range);
  if (!(range_nm > 0.0)) throw OptionError("--range " + a.range + " must be positive");

  SynthesisOptions o;
  o.me.mu = a.mu;
  o.me.voigt = ParseVoigtMethod(a.voigt.c_str());
  if (!a.instrument_fwhm.empty()) o.instrument.gaussian_fwhm_nm = ParseWavelength_nm(a.instrument_fwhm);
  if (!a.macroturbulence.empty()) o.macroturbulence_kms = ParseVelocity_kms(a.macroturbulence);
  const std::string synth_problem = o.Validate();
  if (!synth_problem.empty()) throw OptionError(synth_problem);

  CheckOutputFile(a.png, a.overwrite, "--png");  // before the synthesis (docs/cli.md, "Outputs")

  StokesSynthesizer synth({line}, UniformWavelengthGrid(line.wavelength_nm, range_nm, a.points), o);
  StokesArray stokes;
  synth.Synthesize(p, stokes);
  const Eigen::ArrayXd& w = synth.wavelength_nm();
  const double continuum = p.s0 + a.mu * p.s1;

  if (!a.png.empty()) {
    StokesPlotOptions plot;
    plot.continuum = continuum != 0.0 ? continuum : 1.0;
    plot.centre_nm = line.wavelength_nm;
    char title[256];
    std::snprintf(title, sizeof title, "%s - %s  %.4f nm   B = %.0f G  incl = %.1f deg  azi = %.1f deg  vlos = %.2f km/s",
                  selected.lower_text.c_str(), selected.upper_text.c_str(), line.wavelength_nm, p.field_gauss, p.inclination_deg,
                  p.azimuth_deg, p.vlos_kms);
    plot.title = title;
    WriteOutputAtomically(a.png, a.overwrite, [&](const std::string& tmp) { WriteStokesPlotPng(tmp, w, stokes, plot); });
  }

  if (a.json) {
    JsonWriter j(std::cout);
    auto column = [&](int c) { return std::vector<double>(stokes.col(c).data(), stokes.col(c).data() + w.size()); };
    j.BeginObject();
    j.Key("wavelength_nm").Array(std::vector<double>(w.data(), w.data() + w.size()));
    j.Key("I").Array(column(0)).Key("Q").Array(column(1)).Key("U").Array(column(2)).Key("V").Array(column(3));
    j.Key("continuum").Value(continuum);
    j.Key("g_eff").Value(line.pattern.g_eff).Key("G").Value(line.pattern.G);
    // The key family of `zeeline line` (docs/cli.md): the field given, one Lorentz unit, g_eff times it.
    const double shift_nm = LorentzUnit_nm(line.wavelength_nm, p.field_gauss);
    j.Key("field_gauss").Value(p.field_gauss);
    j.Key("lorentz_shift_nm").Value(shift_nm);
    j.Key("sigma_shift_nm").Value(shift_nm * line.pattern.g_eff);
    j.EndObject();
    std::cout << "\n";
    return;
  }
  std::printf("# Milne-Eddington Stokes profiles, %s - %s at %.6f nm (g_eff = %.4f, G = %.4f)\n",
              selected.lower_text.c_str(), selected.upper_text.c_str(), line.wavelength_nm, line.pattern.g_eff,
              line.pattern.G);
  std::printf("# B = %.2f G, inclination = %.3f deg, azimuth = %.3f deg, vlos = %.4f km/s, Doppler width = %.6g nm\n",
              p.field_gauss, p.inclination_deg, p.azimuth_deg, p.vlos_kms, p.doppler_width_nm);
  std::printf("# damping = %.4g, eta0 = %.4g, s0 = %.4g, s1 = %.4g, mu = %.4g, fill = %.4g, continuum = %.6g\n",
              p.damping, p.eta0, p.s0, p.s1, a.mu, p.fill, continuum);
  const double shift_nm = LorentzUnit_nm(line.wavelength_nm, p.field_gauss);
  std::printf("# lorentz_shift_nm = %.6e, sigma_shift_nm = %.6e (g_eff x lorentz_shift_nm)\n", shift_nm,
              shift_nm * line.pattern.g_eff);
  std::printf("%16s %14s %14s %14s %14s\n", "wavelength_nm", "I", "Q", "U", "V");
  for (Eigen::Index i = 0; i < w.size(); ++i)
    std::printf("%16.8f %14.7e %14.7e %14.7e %14.7e\n", w[i], stokes(i, 0), stokes(i, 1), stokes(i, 2), stokes(i, 3));
}

}  // namespace

void AddProfileCommand(CLI::App& app) {
  auto args = std::make_shared<ProfileArgs>();
  auto* cmd = app.add_subcommand("profile", "Synthetic Stokes I, Q, U, V of one line (Milne-Eddington atmosphere)");
  cmd->footer(
      "The Unno-Rachkovsky solution with magneto-optical effects and the full Zeeman pattern of the\n"
      "transition (docs/line_formation.md). Signs follow docs/conventions.md: inclination 0 = field toward\n"
      "the observer, azimuth counter-clockwise from +x, vlos > 0 = redshift, V > 0 in the blue wing for\n"
      "g_eff > 0 and a field toward the observer.\n"
      "Examples:\n"
      "  zeeline profile --lower 5P1 --upper 5D0 --wavelength 630.2494nm --field 1200G --inclination 30\n"
      "  zeeline profile --line FeI_6302 --catalog demo_maps/lines.csv --field 800G --json\n"
      "  zeeline profile --lower 5P2 --upper 5D2 --wavelength 630.1501 --field 1.5kG --inclination 60 \\\n"
      "      --azimuth 20 --vlos 0.5 --instrument-fwhm 2.5pm --png stokes.png --json");
  AddLineSelectionOptions(cmd, args->line, "the profile is computed in this frame (default vacuum; a catalog line: its own)");
  cmd->add_option("--field", args->field, "field strength >= 0 with unit (G if bare); direction from --inclination")
      ->capture_default_str();
  cmd->add_option("--inclination", args->inclination_deg, "inclination to the line of sight [deg], 0 = toward observer")
      ->capture_default_str();
  cmd->add_option("--azimuth", args->azimuth_deg, "azimuth counter-clockwise from +x [deg]")->capture_default_str();
  cmd->add_option("--vlos", args->vlos, "line-of-sight velocity, > 0 = redshift (km/s if bare)")->capture_default_str();
  cmd->add_option("--doppler-width", args->doppler_width, "Doppler width (1/e half-width) with unit")
      ->capture_default_str();
  cmd->add_option("--damping", args->damping, "damping parameter a [Doppler widths]")->capture_default_str();
  cmd->add_option("--eta0", args->eta0, "line-to-continuum absorption ratio")->capture_default_str();
  cmd->add_option("--s0", args->s0, "source function at the surface")->capture_default_str();
  cmd->add_option("--s1", args->s1, "source function gradient (per unit continuum optical depth)")
      ->capture_default_str();
  cmd->add_option("--mu", args->mu, "cosine of the heliocentric angle, (0, 1]")->capture_default_str();
  cmd->add_option("--fill", args->fill, "magnetic filling factor [0, 1]")->capture_default_str();
  cmd->add_option("--range", args->range, "full width of the wavelength window, centred on --wavelength")
      ->capture_default_str();
  cmd->add_option("--points", args->points, "number of wavelength samples")->capture_default_str();
  cmd->add_option("--instrument-fwhm", args->instrument_fwhm, "Gaussian instrument profile FWHM with unit");
  cmd->add_option("--macroturbulence", args->macroturbulence, "Gaussian macroturbulence, 1/e half-width (km/s)");
  cmd->add_option("--voigt", args->voigt, "Voigt evaluation: fast (Humlicek W4) or reference (libcerf)")
      ->capture_default_str();
  cmd->add_option("--png", args->png, "also draw I, Q/Ic, U/Ic, V/Ic into this PNG file");
  cmd->add_flag("--overwrite", args->overwrite, "replace an existing --png file");
  cmd->add_flag("--json", args->json, "print {\"wavelength_nm\": [...], \"I\": [...], \"Q\": ..., \"U\": ..., \"V\": ...}");
  cmd->callback([args] { RunProfile(*args); });
}

}  // namespace zeeline::cli
