// `zeeline broadening budget|inglis-teller|diagnose`: which mechanisms widen a line, and whether the observed
// widths require a magnetic field (a thin layer over broadening/).
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>
#include <optional>
#include <sstream>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/diagnose_command.hpp"
#include "cli/json_writer.hpp"
#include "cli/notices.hpp"
#include "io/atomic_file.hpp"
#include "synth/bar_chart.hpp"
#include "synth/profile_plot.hpp"
#include "zeeline/atomic/level.hpp"
#include "zeeline/atomic/line_list.hpp"
#include "zeeline/broadening/broadening_budget.hpp"
#include "zeeline/broadening/doppler_width.hpp"
#include "zeeline/broadening/inglis_teller.hpp"
#include "zeeline/broadening/width_diagnosis.hpp"
#include "zeeline/io/air_vacuum.hpp"
#include "zeeline/measure/spectrum_reader.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"

namespace zeeline::cli {
namespace {

std::string Num(double v, const char* format = "%.4g") {
  if (!std::isfinite(v)) return "n/a";
  char buf[64];
  std::snprintf(buf, sizeof buf, format, v);
  return buf;
}

// Refuses before any work when an output exists and --overwrite is not given.
void CheckOutputs(const std::vector<std::string>& paths, bool overwrite) {
  for (const std::string& p : paths)
    if (!p.empty() && std::filesystem::exists(p) && !overwrite)
      throw OutputError(p + ": exists; use --overwrite to replace it (nothing was written)");
}

// Writes a PNG through a temporary file so that no half-written picture is left behind.
template <typename Draw>
void WritePngAtomically(const std::string& path, bool overwrite, Draw draw) {
  try {
    io_detail::TempOutputFile out(path, overwrite);
    draw(out.temp_path());
    out.Commit();
  } catch (const PlotError& e) {
    throw OutputError(e.what());
  } catch (const FitsError& e) {
    throw OutputError(e.what());
  }
}

// ---------------------------------------------------------------------------------------------- budget
struct BudgetArgs {
  std::string wavelength, mass, temperature, microturbulence;
  std::string pressure, perturber_mass, collision_diameter;
  std::string upper_decay_rate, lower_decay_rate;
  std::string electron_density, hydrogen, self_density;
  std::optional<double> oscillator_strength, gs;
  std::string instrument_fwhm, field, lower, upper, png;
  bool json = false, overwrite = false;
};

const char* kLabSafety =
    "safety: lab plasmas, discharge lamps and magnets carry high voltage, UV and strong-field hazards -- follow "
    "your local rules and licensed practice.";

BroadeningBudgetOptions BudgetOptionsFrom(const BudgetArgs& a) {
  BroadeningBudgetOptions o;
  o.wavelength_nm = ParseWavelength_nm(a.wavelength);
  o.mass_u = ParseMass_u(a.mass);
  o.temperature_K = ParseTemperature_K(a.temperature);
  if (!a.microturbulence.empty()) o.microturbulence_kms = ParseVelocity_kms(a.microturbulence);
  if (!a.pressure.empty()) o.pressure_Pa = ParsePressure_Pa(a.pressure);
  if (!a.perturber_mass.empty()) o.perturber_mass_u = ParseMass_u(a.perturber_mass);
  if (!a.collision_diameter.empty()) o.collision_diameter_nm = ParseLength_nm(a.collision_diameter);
  if (!a.upper_decay_rate.empty()) o.upper_decay_rate_per_s = ParseRate_per_s(a.upper_decay_rate);
  if (!a.lower_decay_rate.empty()) o.lower_decay_rate_per_s = ParseRate_per_s(a.lower_decay_rate);
  if (!a.self_density.empty()) o.self_density_cm3 = ParseNumberDensity_cm3(a.self_density);
  o.oscillator_strength = a.oscillator_strength;
  if (a.electron_density.empty() != a.hydrogen.empty())
    throw OptionError("--electron-density and --hydrogen NU-NL go together (hydrogen Stark width)");
  if (!a.electron_density.empty()) {
    o.electron_density_cm3 = ParseNumberDensity_cm3(a.electron_density);
    int nu = 0, nl = 0;
    char tail = 0;
    if (std::sscanf(a.hydrogen.c_str(), "%d-%d%c", &nu, &nl, &tail) != 2)
      throw OptionError("--hydrogen '" + a.hydrogen + "': expected NU-NL, e.g. 3-2 for H-alpha");
    o.hydrogen_n_upper = nu;
    o.hydrogen_n_lower = nl;
  }
  if (!a.instrument_fwhm.empty()) o.instrument_fwhm_nm = ParseWavelength_nm(a.instrument_fwhm);
  if (a.lower.empty() != a.upper.empty()) throw OptionError("--lower and --upper go together");
  if (!a.lower.empty()) {
    LandeOptions lande;
    if (a.gs) lande.g_spin = *a.gs;
    const std::string bad = lande.Validate();
    if (!bad.empty()) throw OptionError("--gs: " + bad);
    const Level lower = ParseLevel(a.lower), upper = ParseLevel(a.upper);
    o.g_lower_weight = lower.two_J + 1.0;
    o.g_upper_weight = upper.two_J + 1.0;
    o.pattern = ComputeZeemanPattern(lower, upper, lande);
  }
  if (!a.field.empty()) {
    if (a.lower.empty()) throw OptionError("--field needs the line's levels: add --lower L --upper U");
    o.field_gauss = ParseField_gauss(a.field);
  }
  const std::string bad = o.Validate();
  if (!bad.empty()) throw OptionError(bad);
  return o;
}

void WriteBudgetJson(std::ostream& out, const BroadeningBudgetOptions& o, const BroadeningBudget& b) {
  JsonWriter j(out);
  j.BeginObject();
  j.Key("wavelength_nm").Value(b.wavelength_nm).Key("mass_u").Value(o.mass_u);
  j.Key("temperature_K").Value(o.temperature_K).Key("microturbulence_kms").Value(o.microturbulence_kms);
  j.Key("mechanisms").BeginArray();
  for (const LineWidth& w : b.mechanisms) {
    j.BeginObject();
    j.Key("name").Value(w.name).Key("fwhm_nm").Value(w.fwhm_nm).Key("profile").Value(ToString(w.profile));
    j.Key("fwhm_pm").Value(w.fwhm_nm * 1e3).Key("fwhm_hz").Value(w.fwhm_hz).Key("fwhm_kms").Value(w.fwhm_kms);
    j.Key("formula").Value(w.formula).Key("source").Value(w.source);
    j.Key("notes").BeginArray();
    for (const std::string& n : w.notes) j.Value(n);
    j.EndArray();
    j.EndObject();
  }
  j.EndArray();
  j.Key("gaussian_fwhm_nm").Value(b.gaussian_fwhm_nm).Key("lorentzian_fwhm_nm").Value(b.lorentzian_fwhm_nm);
  j.Key("total_fwhm_nm").Value(b.total_fwhm_nm).Key("total_fwhm_numerical_nm").Value(b.total_fwhm_numerical_nm);
  j.Key("total_fwhm_hz").Value(b.total_fwhm_hz).Key("total_fwhm_kms").Value(b.total_fwhm_kms);
  j.Key("total_method").Value("Olivero & Longbothum 1977 (stated accuracy 0.02 %)");
  j.Key("dominant").Value(b.dominant);
  j.EndObject();
  out << "\n";
}

std::vector<std::string> BudgetText(const BroadeningBudget& b) {
  std::vector<std::string> t;
  char buf[256];
  std::snprintf(buf, sizeof buf, "line broadening budget at %.6g nm", b.wavelength_nm);
  t.push_back(buf);
  t.push_back("  mechanism    profile          FWHM [pm]     FWHM [GHz]   FWHM [km/s]");
  for (const LineWidth& w : b.mechanisms) {
    std::snprintf(buf, sizeof buf, "  %-12s %-15s %11.4g %14.4g %13.4g", w.name.c_str(), ToString(w.profile).c_str(),
                  w.fwhm_nm * 1e3, w.fwhm_hz * 1e-9, w.fwhm_kms);
    t.push_back(buf);
  }
  std::snprintf(buf, sizeof buf, "  %-12s %-15s %11.4g %14.4g %13.4g", "total", "voigt", b.total_fwhm_nm * 1e3,
                b.total_fwhm_hz * 1e-9, b.total_fwhm_kms);
  t.push_back(buf);
  t.push_back("");
  std::snprintf(buf, sizeof buf,
                "total: Gaussian parts in quadrature %.4g pm, Lorentzian parts summed %.4g pm, Voigt FWHM %.5g pm "
                "(Olivero & Longbothum 1977, stated accuracy 0.02 %%; numerical %.5g pm, difference %.2g %%)",
                b.gaussian_fwhm_nm * 1e3, b.lorentzian_fwhm_nm * 1e3, b.total_fwhm_nm * 1e3,
                b.total_fwhm_numerical_nm * 1e3,
                100.0 * (b.total_fwhm_nm - b.total_fwhm_numerical_nm) / b.total_fwhm_numerical_nm);
  t.push_back(buf);
  t.push_back("dominant: " + b.dominant);
  t.push_back("");
  for (const LineWidth& w : b.mechanisms) {
    t.push_back(w.name + ": " + w.formula + "  [" + w.source + "]");
    for (const std::string& n : w.notes) t.push_back("    " + n);
  }
  return t;
}

void WriteBudgetPng(const std::string& path, bool overwrite, const BroadeningBudget& b) {
  std::vector<Bar> bars;
  for (const LineWidth& w : b.mechanisms)
    bars.push_back({w.name, w.fwhm_nm * 1e3, static_cast<int>(w.profile), w.name == b.dominant});
  bars.push_back({"total (Voigt)", b.total_fwhm_nm * 1e3, 3, false});
  BarChartOptions o;
  o.title = "zeeline broadening budget at " + Num(b.wavelength_nm, "%.6g") + " nm";
  o.axis_label = "FWHM [pm] (logarithmic)";
  o.categories = {"Lorentzian", "Gaussian", "Zeeman pattern (Gaussian-equivalent)", "total"};
  o.footer = {"total: Gaussian parts in quadrature, Lorentzian parts summed, Voigt FWHM by Olivero & Longbothum (1977)",
              "heavy outline: dominant mechanism (" + b.dominant + ")"};
  WritePngAtomically(path, overwrite, [&](const std::string& tmp) { WriteBarChartPng(tmp, bars, o); });
}

void RunBudget(const BudgetArgs& a) {
  CheckOutputs({a.png}, a.overwrite);
  const BroadeningBudgetOptions o = BudgetOptionsFrom(a);
  const BroadeningBudget b = ComputeBroadeningBudget(o);
  if (!a.png.empty()) WriteBudgetPng(a.png, a.overwrite, b);
  if (a.json) {
    WriteBudgetJson(std::cout, o, b);
    Notice(kLabSafety);
    return;
  }
  for (const std::string& l : BudgetText(b)) std::printf("%s\n", l.c_str());
  if (!a.png.empty()) std::printf("\npicture: %s\n", a.png.c_str());
  std::printf("\n%s\n", kLabSafety);
}

void AddBudget(CLI::App* parent) {
  auto a = std::make_shared<BudgetArgs>();
  auto* cmd = parent->add_subcommand("budget", "FWHM of each broadening mechanism of one line, the Voigt total and the dominant one");
  cmd->footer(
      "Formulas and sources: docs/broadening.md. Values take units: 10000K or 1eV, 1.5km/s, 50000Pa or 10Torr,\n"
      "0.36nm, 1e15cm-3, 3pm, 6.1e7/s; --mass and --perturber-mass in u.\n"
      "Examples:\n"
      "  zeeline broadening budget --wavelength 656.28nm --mass 1.008 --temperature 10000K\n"
      "  zeeline broadening budget --wavelength 667.815nm --mass 4.0026 --temperature 3eV --pressure 20Pa \\\n"
      "      --perturber-mass 4.0026 --collision-diameter 0.22nm --upper-decay-rate 6.4e7/s \\\n"
      "      --electron-density 1e13cm-3 --hydrogen 3-2 --instrument-fwhm 5pm --field 0.5T --lower 1P1 --upper 1D2 \\\n"
      "      --png budget.png");
  cmd->add_option("--wavelength", a->wavelength, "rest wavelength, e.g. 656.28nm")->required();
  cmd->add_option("--mass", a->mass, "radiator mass in u, e.g. 4.0026")->required();
  cmd->add_option("--temperature", a->temperature, "kinetic temperature, e.g. 10000K or 1.5eV")->required();
  cmd->add_option("--microturbulence", a->microturbulence, "most-probable microturbulent speed, e.g. 1.5km/s");
  cmd->add_option("--pressure", a->pressure, "perturber gas pressure, e.g. 50000Pa (with --perturber-mass, --collision-diameter)");
  cmd->add_option("--perturber-mass", a->perturber_mass, "perturber mass in u");
  cmd->add_option("--collision-diameter", a->collision_diameter, "hard-sphere collision diameter, e.g. 0.36nm");
  cmd->add_option("--upper-decay-rate", a->upper_decay_rate, "total decay rate of the upper level, e.g. 6.1e7/s");
  cmd->add_option("--lower-decay-rate", a->lower_decay_rate, "total decay rate of the lower level (0 for ground)");
  cmd->add_option("--electron-density", a->electron_density, "electron density for the hydrogen Stark estimate, e.g. 1e15cm-3");
  cmd->add_option("--hydrogen", a->hydrogen, "hydrogen line NU-NL for the Stark estimate, e.g. 3-2");
  cmd->add_option("--self-density", a->self_density,
                  "density of like atoms in the lower level of this resonance line, e.g. 1e14cm-3 (with --oscillator-strength, --lower, --upper)");
  cmd->add_option("--oscillator-strength", a->oscillator_strength, "absorption oscillator strength f of the line");
  cmd->add_option("--instrument-fwhm", a->instrument_fwhm, "Gaussian instrument FWHM, e.g. 3pm");
  cmd->add_option("--field", a->field, "magnetic field for the Zeeman width, e.g. 0.5T (with --lower, --upper)");
  cmd->add_option("--lower", a->lower, "lower level, e.g. 1P1 (Zeeman pattern, statistical weight)");
  cmd->add_option("--upper", a->upper, "upper level, e.g. 1D2");
  cmd->add_option("--gs", a->gs, "electron spin g-factor (default CODATA; 2 = textbook)");
  cmd->add_flag("--json", a->json, "print one JSON object (keys in docs/broadening.md)");
  cmd->add_option("--png", a->png, "bar chart of the contributions into this PNG");
  cmd->add_flag("--overwrite", a->overwrite, "replace an existing --png");
  cmd->callback([a] { RunBudget(*a); });
}

// --------------------------------------------------------------------------------------- inglis-teller
struct InglisTellerArgs {
  std::optional<double> last_resolved;
  std::string electron_density;
  bool json = false;
};

void RunInglisTeller(const InglisTellerArgs& a) {
  if (a.last_resolved.has_value() == !a.electron_density.empty())
    throw OptionError("give exactly one of --last-resolved N and --electron-density N_E");
  const char* form = "log10 n_e[cm^-3] = 23.26 - 7.5 log10 n_max (Inglis & Teller 1939, ApJ 90, 439)";
  double n_max = 0.0, density = 0.0;
  if (a.last_resolved) {
    n_max = *a.last_resolved;
    if (!(n_max > 1.0) || !std::isfinite(n_max))
      throw OptionError("--last-resolved " + Num(n_max) + ": the upper principal quantum number must be > 1");
    density = InglisTellerDensity_cm3(n_max);
  } else {
    density = ParseNumberDensity_cm3(a.electron_density);
    if (!(density > 0.0)) throw OptionError("--electron-density must be > 0");
    n_max = InglisTellerLastResolved(density);
  }
  if (a.json) {
    JsonWriter j(std::cout);
    j.BeginObject();
    j.Key("last_resolved_n").Value(n_max).Key("electron_density_cm3").Value(density);
    j.Key("relation").Value(form);
    j.EndObject();
    std::cout << "\n";
    return;
  }
  std::printf("last resolved upper level n_max = %.4g\nelectron density n_e = %.4g cm^-3\n", n_max, density);
  std::printf("relation: %s\n", form);
  std::printf("an estimate: quasi-static ions, hydrogenic levels; sensitive to how 'resolved' is judged.\n");
}

void AddInglisTeller(CLI::App* parent) {
  auto a = std::make_shared<InglisTellerArgs>();
  auto* cmd = parent->add_subcommand("inglis-teller", "Electron density from the last resolved line of a hydrogen series (and back)");
  cmd->footer(
      "Examples:\n"
      "  zeeline broadening inglis-teller --last-resolved 12\n"
      "  zeeline broadening inglis-teller --electron-density 1e14cm-3 --json");
  cmd->add_option("--last-resolved", a->last_resolved, "principal quantum number of the last resolved upper level");
  cmd->add_option("--electron-density", a->electron_density, "electron density, e.g. 1e14cm-3 (gives n_max)");
  cmd->add_flag("--json", a->json, "print {\"electron_density_cm3\", \"last_resolved_n\", \"relation\"}");
  cmd->callback([a] { RunInglisTeller(*a); });
}

// ------------------------------------------------------------------------------------------- diagnose
std::vector<std::string> SplitNames(const std::string& text) {
  std::vector<std::string> out;
  std::stringstream ss(text);
  std::string item;
  while (std::getline(ss, item, ',')) {
    while (!item.empty() && item.front() == ' ') item.erase(0, 1);
    while (!item.empty() && item.back() == ' ') item.pop_back();
    if (item.empty()) throw OptionError("--lines '" + text + "': empty line name");
    out.push_back(item);
  }
  return out;
}

// The catalog lines to diagnose: --lines NAMES, or every catalog line inside the spectrum. One species, with
// a mass; rest wavelengths converted to the spectrum's frame when both are known.
WidthDiagnosisOptions DiagnoseOptionsFrom(const DiagnoseArgs& a, const Spectrum1D& s, std::string& species) {
  const std::vector<LineEntry> catalog = ReadLineList(a.catalog);
  std::vector<const LineEntry*> chosen;
  if (!a.lines.empty()) {
    for (const std::string& name : SplitNames(a.lines)) chosen.push_back(&FindLine(catalog, name, a.catalog));
  } else {
    for (const LineEntry& e : catalog)
      if (SpectrumCovers(s, e.wavelength_nm)) chosen.push_back(&e);
    if (chosen.empty())
      throw BroadeningError(a.catalog + ": no catalog line has samples in the spectrum " + s.source + " (" +
                            Num(s.wavelength_nm.front(), "%.4f") + " - " + Num(s.wavelength_nm.back(), "%.4f") +
                            " nm); name them with --lines");
  }
  LandeOptions lande;
  if (a.gs) lande.g_spin = *a.gs;
  const std::string bad_gs = lande.Validate();
  if (!bad_gs.empty()) throw OptionError("--gs: " + bad_gs);
  WidthDiagnosisOptions o;
  species = chosen.front()->species;
  for (const LineEntry* e : chosen) {
    const std::string where = a.catalog + " line " + std::to_string(e->source_line) + " (" + e->name + ")";
    if (e->species != species)
      throw BroadeningError(where + ": species '" + e->species + "' differs from '" + species +
                            "'; diagnose lines of one species at a time");
    if (!e->mass_amu) throw BroadeningError(where + ": no mass_amu; the Doppler width needs the radiator's mass");
    if (o.mass_u > 0.0 && std::fabs(*e->mass_amu - o.mass_u) > 1e-6 * o.mass_u)
      throw BroadeningError(where + ": mass_amu " + Num(*e->mass_amu) + " differs from the other lines' " + Num(o.mass_u));
    o.mass_u = *e->mass_amu;
    DiagnosisLine l;
    l.name = e->name;
    l.line.rest_wavelength_nm =
        s.frame && e->frame != *s.frame ? ConvertWavelength_nm(e->wavelength_nm, e->frame, *s.frame) : e->wavelength_nm;
    l.line.pattern = ComputeZeemanPattern(e->lower, e->upper, lande);
    o.lines.push_back(l);
  }
  if (!a.instrument_fwhm.empty()) o.instrument_fwhm_nm = ParseWavelength_nm(a.instrument_fwhm);
  if (!a.microturbulence.empty()) o.microturbulence_kms = ParseVelocity_kms(a.microturbulence);
  if (!a.window.empty()) o.window_halfwidth_nm = ParseWavelength_nm(a.window);
  o.noise_I = a.noise;
  o.noise_V = a.noise_v > 0.0 ? a.noise_v : a.noise;
  o.detection_sigma = a.detection_sigma;
  o.degeneracy_tolerance = a.degeneracy_tolerance;
  o.use_v = !a.no_v;
  const std::string bad = o.Validate();
  if (!bad.empty()) throw OptionError(bad);
  return o;
}

void PutFit(JsonWriter& j, const char* key, const ModelFit& f, const WidthDiagnosisOptions& o, bool magnetic) {
  j.Key(key).BeginObject();
  j.Key("chi2").Value(f.chi2).Key("dof").Value(f.dof).Key("iterations").Value(f.iterations);
  j.Key("doppler_speed_kms").Value(f.shape.speed_kms).Key("doppler_speed_err_kms").Value(f.speed_err_kms);
  j.Key("temperature_K").Value(TemperatureFromDopplerSpeed_K(f.shape.speed_kms, o.mass_u, o.microturbulence_kms));
  j.Key("lorentz_hwhm_nm").Value(f.shape.lorentz_hwhm_nm).Key("lorentz_hwhm_err_nm").Value(f.lorentz_hwhm_err_nm);
  j.Key("vlos_kms").Value(f.shape.vlos_kms).Key("vlos_err_kms").Value(f.vlos_err_kms);
  if (magnetic) {
    j.Key("field_gauss").Value(f.shape.field_gauss).Key("field_err_gauss").Value(f.field_err_gauss);
    j.Key("inclination_deg").Value(f.shape.inclination_deg).Key("inclination_err_deg").Value(f.inclination_err_deg);
  }
  j.Key("areas").Array(f.areas).Key("area_errs").Array(f.area_errs);
  j.EndObject();
}

void WriteDiagnoseJson(std::ostream& out, const Spectrum1D& s, const std::string& species,
                       const WidthDiagnosisOptions& o, const WidthDiagnosis& d) {
  JsonWriter j(out);
  j.BeginObject();
  j.Key("input").BeginObject();
  j.Key("file").Value(s.source).Key("samples").Value(static_cast<long long>(s.size()));
  j.Key("stokes").Value(std::string("I") + (s.has_v() ? "V" : ""));
  j.Key("species").Value(species).Key("mass_u").Value(o.mass_u);
  j.Key("instrument_fwhm_nm").Value(o.instrument_fwhm_nm).Key("microturbulence_kms").Value(o.microturbulence_kms);
  j.EndObject();
  j.Key("lines").BeginArray();
  for (std::size_t i = 0; i < o.lines.size(); ++i) {
    const ModelLine& l = o.lines[i].line;
    j.BeginObject();
    j.Key("name").Value(o.lines[i].name).Key("rest_wavelength_nm").Value(l.rest_wavelength_nm);
    j.Key("g_eff").Value(l.pattern.g_eff).Key("width_factor").Value(d.width_factor[i]);
    j.Key("width_factor_lambda2_nm2").Value(d.width_factor[i] * l.rest_wavelength_nm * l.rest_wavelength_nm);
    j.Key("window_halfwidth_nm").Value(d.window_halfwidth_nm[i]);
    const double area = d.magnetic_required ? d.magnetic.areas[i] : d.nonmagnetic.areas[i];
    j.Key("area").Value(area).Key("sense").Value(area >= 0.0 ? "emission" : "absorption");
    j.EndObject();
  }
  j.EndArray();
  j.Key("fitted_samples").Value(d.samples).Key("has_v").Value(d.has_v);
  j.Key("noise_I").Value(d.noise_I).Key("noise_V").Value(d.has_v ? d.noise_V : NAN);
  j.Key("magnetic_required").Value(d.magnetic_required);
  j.Key("field_gauss").Value(d.field_gauss).Key("field_err_gauss").Value(d.field_err_gauss);
  j.Key("inclination_deg").Value(d.inclination_deg).Key("inclination_err_deg").Value(d.inclination_err_deg);
  j.Key("significance_sigma").Value(d.significance_sigma);
  j.Key("likelihood_ratio").Value(d.likelihood_ratio);
  j.Key("delta_aic").Value(d.delta_aic).Key("delta_bic").Value(d.delta_bic);
  if (d.upper_limit_gauss)
    j.Key("upper_limit_gauss").Value(*d.upper_limit_gauss);
  else
    j.Key("upper_limit_gauss").Null();
  j.Key("degenerate").Value(d.degenerate).Key("degeneracy_reason").Value(d.degeneracy_reason);
  j.Key("temperature_K").Value(d.temperature_K).Key("temperature_err_K").Value(d.temperature_err_K);
  j.Key("temperature_if_nonmagnetic_K").Value(d.temperature_nonmagnetic_K);
  j.Key("verdict").Value(d.verdict);
  PutFit(j, "nonmagnetic", d.nonmagnetic, o, false);
  PutFit(j, "magnetic", d.magnetic, o, true);
  j.Key("cross_check").BeginArray();
  for (const LineCrossCheck& x : d.cross_checks) {
    j.BeginObject();
    j.Key("name").Value(x.name).Key("available").Value(x.available);
    j.Key("wfa_blos_gauss").Value(x.wfa_blos_gauss).Key("wfa_blos_err_gauss").Value(x.wfa_blos_err_gauss);
    j.Key("cog_blos_gauss").Value(x.cog_blos_gauss).Key("cog_blos_err_gauss").Value(x.cog_blos_err_gauss);
    j.EndObject();
  }
  j.EndArray();
  j.EndObject();
  out << "\n";
}

std::vector<std::string> DiagnoseText(const Spectrum1D& s, const std::string& species, const WidthDiagnosisOptions& o,
                                      const WidthDiagnosis& d) {
  std::vector<std::string> t;
  char buf[320];
  t.push_back("spectrum: " + s.source + " (" + std::to_string(s.size()) + " samples, Stokes I" + (s.has_v() ? "V" : "") +
              "), species " + species + ", mass " + Num(o.mass_u) + " u");
  t.push_back("  line            lambda [nm]   g_eff   z (width factor)   z*lambda^2 [nm^2]   window [pm]   sense");
  for (std::size_t i = 0; i < o.lines.size(); ++i) {
    const double l = o.lines[i].line.rest_wavelength_nm;
    const double area = d.magnetic_required ? d.magnetic.areas[i] : d.nonmagnetic.areas[i];
    std::snprintf(buf, sizeof buf, "  %-14s %12.5f %7.3f %18.4f %19.5g %13.4g   %s", o.lines[i].name.c_str(), l,
                  o.lines[i].line.pattern.g_eff, d.width_factor[i], d.width_factor[i] * l * l,
                  d.window_halfwidth_nm[i] * 1e3, area >= 0.0 ? "emission" : "absorption");
    t.push_back(buf);
  }
  std::snprintf(buf, sizeof buf, "  %d fitted samples, noise I %.3g%s", d.samples, d.noise_I,
                d.has_v ? (", V " + Num(d.noise_V, "%.3g")).c_str() : "");
  t.push_back(buf);
  t.push_back("");
  auto fit_line = [&](const char* name, const ModelFit& f, bool mag) {
    std::snprintf(buf, sizeof buf, "  %-13s chi2 %.1f (dof %d)  u %.3f +- %.2g km/s (T %.4g K)  gamma %.3g pm  v %.3f km/s%s",
                  name, f.chi2, f.dof, f.shape.speed_kms, f.speed_err_kms,
                  TemperatureFromDopplerSpeed_K(f.shape.speed_kms, o.mass_u, o.microturbulence_kms),
                  f.shape.lorentz_hwhm_nm * 1e3, f.shape.vlos_kms,
                  mag ? ("  B " + Num(f.shape.field_gauss, "%.0f") + " +- " + Num(f.field_err_gauss, "%.2g") + " G, incl " +
                         Num(f.shape.inclination_deg, "%.0f") + " deg")
                            .c_str()
                      : "");
    t.push_back(buf);
  };
  t.push_back("models:");
  fit_line("non-magnetic", d.nonmagnetic, false);
  fit_line("magnetic", d.magnetic, true);
  std::snprintf(buf, sizeof buf,
                "likelihood ratio %.2f -> %.3g sigma (chi2, 2 dof); delta AIC %.1f, delta BIC %.1f (positive favours a field)",
                d.likelihood_ratio, d.significance_sigma, d.delta_aic, d.delta_bic);
  t.push_back(buf);
  t.push_back(std::string("degenerate: ") + (d.degenerate ? "yes -- " + d.degeneracy_reason : "no"));
  std::snprintf(buf, sizeof buf, "temperature from the widths: %.4g +- %.2g K (all-thermal reading: %.4g K)",
                d.temperature_K, d.temperature_err_K, d.temperature_nonmagnetic_K);
  t.push_back(buf);
  if (!d.cross_checks.empty()) {
    t.push_back("Stokes V cross-check (B_LOS; the fit gives B cos(incl) = " +
                Num(d.magnetic.shape.field_gauss * std::cos(d.magnetic.shape.inclination_deg * 3.14159265358979 / 180.0),
                    "%.0f") +
                " G):");
    for (const LineCrossCheck& x : d.cross_checks)
      t.push_back("  " + x.name + ": weak field " + Num(x.wfa_blos_gauss, "%.0f") + " +- " +
                  Num(x.wfa_blos_err_gauss, "%.2g") + " G, centre of gravity " + Num(x.cog_blos_gauss, "%.0f") + " +- " +
                  Num(x.cog_blos_err_gauss, "%.2g") + " G");
  }
  t.push_back("");
  t.push_back("verdict: " + d.verdict);
  return t;
}

// One picture per line: the data in the line's window with both models.
std::vector<std::string> DiagnosePngPaths(const std::string& png, const WidthDiagnosisOptions& o) {
  if (o.lines.size() == 1) return {png};
  std::vector<std::string> out;
  const std::filesystem::path p(png);
  for (const DiagnosisLine& l : o.lines)
    out.push_back((p.parent_path() / (p.stem().string() + "_" + l.name + p.extension().string())).string());
  return out;
}

void WriteDiagnosePngs(const std::vector<std::string>& paths, bool overwrite, const Spectrum1D& s,
                       const WidthDiagnosisOptions& o, const WidthDiagnosis& d, const std::vector<std::string>& text) {
  for (std::size_t i = 0; i < o.lines.size(); ++i) {
    const double l0 = o.lines[i].line.rest_wavelength_nm, hw = d.window_halfwidth_nm[i];
    std::vector<std::size_t> idx;
    for (std::size_t k = 0; k < d.fit_wavelength_nm.size(); ++k)
      if (std::fabs(d.fit_wavelength_nm[k] - l0) <= hw * (1.0 + 1e-12)) idx.push_back(k);
    if (idx.size() < 2) continue;
    const Eigen::Index n = static_cast<Eigen::Index>(idx.size());
    Eigen::ArrayXd w(n);
    StokesArray st = StokesArray::Zero(n, 4);
    PlotCurve a, b;
    a.y.resize(n);
    b.y.resize(n);
    a.r = 0.1, a.g = 0.5, a.b = 0.1, a.dashed = true;
    PlotCurve av = a, bv = b;
    av.panel = bv.panel = 3;
    for (Eigen::Index k = 0; k < n; ++k) {
      const std::size_t m = idx[static_cast<std::size_t>(k)];
      w[k] = d.fit_wavelength_nm[m];
      const std::size_t src = static_cast<std::size_t>(
          std::lower_bound(s.wavelength_nm.begin(), s.wavelength_nm.end(), w[k]) - s.wavelength_nm.begin());
      st(k, 0) = s.I[src];
      if (s.has_v()) st(k, 3) = s.V[src];
      a.y[k] = d.nonmagnetic.model_I[m];
      b.y[k] = d.magnetic.model_I[m];
      av.y[k] = d.has_v ? d.nonmagnetic.model_V[m] : 0.0;
      bv.y[k] = d.has_v ? d.magnetic.model_V[m] : 0.0;
    }
    StokesPlotOptions p;
    p.centre_nm = l0;
    p.divide_by_continuum = false;
    p.title = "zeeline broadening diagnose: " + o.lines[i].name + " (" + Num(l0, "%.4f") + " nm)";
    p.overlays = {a, b};
    if (d.has_v) p.overlays.insert(p.overlays.end(), {av, bv});
    p.annotation = text;
    p.annotation.push_back("");
    p.annotation.push_back("dashed green: non-magnetic model; red: magnetic model");
    WritePngAtomically(paths[i], overwrite, [&](const std::string& tmp) { WriteStokesPlotPng(tmp, w, st, p); });
  }
}

// Wraps text for the PNG column.
std::vector<std::string> WrapText(const std::vector<std::string>& lines, std::size_t width) {
  std::vector<std::string> out;
  for (const std::string& l : lines) {
    std::string rest = l;
    while (rest.size() > width) {
      std::size_t cut = rest.rfind(' ', width);
      if (cut == std::string::npos || cut < 10) cut = width;
      out.push_back(rest.substr(0, cut));
      rest = "    " + rest.substr(cut + 1);
    }
    out.push_back(rest);
  }
  return out;
}

void RunDiagnose(const DiagnoseArgs& a) {
  if (!a.png.empty() && std::filesystem::exists(a.png) && !a.overwrite)
    throw OutputError(a.png + ": exists; use --overwrite to replace it (nothing was written)");
  SpectrumReadOptions ro;
  ro.v_sign = a.v_sign;
  const std::string bad_ro = ro.Validate();
  if (!bad_ro.empty()) throw OptionError(bad_ro);
  const Spectrum1D s = ReadSpectrum(a.spectrum, ro);
  std::string species;
  const WidthDiagnosisOptions o = DiagnoseOptionsFrom(a, s, species);
  std::vector<std::string> pngs;
  if (!a.png.empty()) {
    pngs = DiagnosePngPaths(a.png, o);
    CheckOutputs(pngs, a.overwrite);
  }
  const WidthDiagnosis d = DiagnoseWidths(s, o);
  const std::vector<std::string> text = DiagnoseText(s, species, o, d);
  if (!pngs.empty()) WriteDiagnosePngs(pngs, a.overwrite, s, o, d, WrapText(text, 50));
  if (a.json) {
    WriteDiagnoseJson(std::cout, s, species, o, d);
    Notice(kLabSafety);
    return;
  }
  for (const std::string& l : text) std::printf("%s\n", l.c_str());
  for (const std::string& p : pngs) std::printf("picture: %s\n", p.c_str());
  std::printf("\n%s\n", kLabSafety);
}

void AddDiagnose(CLI::App* parent) {
  auto a = std::make_shared<DiagnoseArgs>();
  auto* cmd = parent->add_subcommand(
      "diagnose", "Do the observed widths of lines of one species require a magnetic field? (likelihood-ratio test)");
  cmd->footer(
      "SPECTRUM: a table or FITS spectrum as for `zeeline measure` (I, or I with V; emission or absorption).\n"
      "Line data (levels, mass_amu) from the --catalog line list. Models, statistics and JSON keys:\n"
      "docs/broadening.md.\n"
      "Examples:\n"
      "  zeeline broadening diagnose demo_maps/spectra/he_column_magnetised.txt --catalog demo_maps/plasma_lines.csv \\\n"
      "      --instrument-fwhm 3pm\n"
      "  zeeline broadening diagnose hot.txt --catalog lines.csv --lines HeI_5016,HeI_6678 --json");
  cmd->add_option("spectrum", a->spectrum, "spectrum table or FITS file")->required();
  AddDiagnoseOptions(cmd, *a);
  cmd->callback([a] { RunDiagnose(*a); });
}

}  // namespace

void AddDiagnoseOptions(CLI::App* cmd, DiagnoseArgs& a) {
  cmd->add_option("--catalog", a.catalog, "line list with levels and mass_amu (docs/line_list.md)")->required();
  cmd->add_option("--lines", a.lines, "comma-separated line names (default: every catalog line inside the spectrum)");
  cmd->add_option("--instrument-fwhm", a.instrument_fwhm, "Gaussian instrument FWHM, e.g. 3pm (default 0)");
  cmd->add_option("--microturbulence", a.microturbulence, "known microturbulence, subtracted for the temperature");
  cmd->add_option("--window", a.window, "half-width of each line's fit window, e.g. 0.1nm (default: 5 observed FWHM)");
  cmd->add_option("--noise", a.noise, "noise of I (and V) in data units (default: measured in the windows' outer parts)");
  cmd->add_option("--noise-v", a.noise_v, "noise of V in data units (default: --noise or measured)");
  cmd->add_option("--detection-sigma", a.detection_sigma, "significance needed to call a field required")->capture_default_str();
  cmd->add_option("--degeneracy-tolerance", a.degeneracy_tolerance,
                  "relative spread of z*lambda^2 (or z*lambda) below which the line set is degenerate")->capture_default_str();
  cmd->add_flag("--no-v", a.no_v, "ignore Stokes V even when present (widths only)");
  cmd->add_option("--v-sign", a.v_sign, "+1, or -1 for data using the IAU 1974 sign of V")->capture_default_str();
  cmd->add_option("--gs", a.gs, "electron spin g-factor (default CODATA; 2 = textbook)");
  cmd->add_flag("--json", a.json, "print one JSON object (keys in docs/broadening.md)");
  cmd->add_option("--png", a.png, "picture of the fits (one per line: P_<line>.png when there are several)");
  cmd->add_flag("--overwrite", a.overwrite, "replace existing pictures");
}

void DiagnoseToJson(const DiagnoseArgs& a, const Spectrum1D& s, std::ostream& out) {
  std::string species;
  const WidthDiagnosisOptions o = DiagnoseOptionsFrom(a, s, species);
  WriteDiagnoseJson(out, s, species, o, DiagnoseWidths(s, o));
  Notice(kLabSafety);
}

void AddBroadeningCommand(CLI::App& app) {
  auto* cmd = app.add_subcommand("broadening", "Is a line's width magnetic? Broadening budget, Inglis-Teller, diagnosis");
  cmd->require_subcommand(1);
  cmd->footer("Formulas, sources and JSON keys: docs/broadening.md.");
  AddBudget(cmd);
  AddInglisTeller(cmd);
  AddDiagnose(cmd);
}

}  // namespace zeeline::cli
