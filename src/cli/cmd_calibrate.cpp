// `zeeline calibrate modulation|crosstalk|magnet`: polarimeter calibration (a thin layer over polarimetry/).
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
#include "cli/json_writer.hpp"
#include "cli/notices.hpp"
#include "cli/line_selection.hpp"
#include "cli/output_paths.hpp"
#include "synth/profile_plot.hpp"
#include "io/residual_plot.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/io/air_vacuum.hpp"
#include "zeeline/io/stokes_transform_writer.hpp"
#include "zeeline/polarimetry/crosstalk.hpp"
#include "zeeline/atomic/paschen_back.hpp"
#include "zeeline/polarimetry/magnet_fit.hpp"
#include "zeeline/polarimetry/modulation_fit.hpp"

namespace zeeline::cli {
namespace {

namespace pol = zeeline::polarimetry;

const char* kStokesNames[] = {"I", "Q", "U", "V"};

std::string Num(double v, const char* format = "%.6g") {
  if (!std::isfinite(v)) return "n/a";
  char buf[64];
  std::snprintf(buf, sizeof buf, format, v);
  return buf;
}


// Writes text to `path` through a temporary file and a rename (nothing half-written).
void WriteTextFile(const std::string& path, const std::string& text) {
  const std::string tmp = path + ".tmp-zeeline";
  {
    std::ofstream f(tmp, std::ios::binary);
    if (!f) throw OutputError(path + ": cannot open for writing");
    f << text;
    f.close();
    if (!f) {
      std::remove(tmp.c_str());
      throw OutputError(path + ": write failed");
    }
  }
  std::error_code ec;
  std::filesystem::rename(tmp, path, ec);
  if (ec) {
    std::remove(tmp.c_str());
    throw OutputError(path + ": cannot write (" + ec.message() + ")");
  }
}

void Matrix(JsonWriter& j, const Eigen::MatrixXd& m) {
  j.BeginArray();
  for (Eigen::Index r = 0; r < m.rows(); ++r) {
    std::vector<double> row(static_cast<std::size_t>(m.cols()));
    for (Eigen::Index c = 0; c < m.cols(); ++c) row[static_cast<std::size_t>(c)] = m(r, c);
    j.Array(row);
  }
  j.EndArray();
}

void Warnings(JsonWriter& j, const std::vector<std::string>& warnings) {
  j.Key("warnings").BeginArray();
  for (const std::string& w : warnings) j.Value(w);
  j.EndArray();
}

// ---------------------------------------------------------------- modulation
struct ModulationArgs {
  std::string table, png, output;
  double retardance_start = 90.0, gain = 1.0;
  std::optional<double> read_noise;
  bool json = false, overwrite = false;
};

std::string ModulationJson(const pol::CalibrationSequence& seq, const pol::ModulationFitResult& r) {
  std::ostringstream out;
  JsonWriter j(out);
  j.BeginObject();
  j.Key("input").Value(seq.source);
  j.Key("n_modulation_states").Value(seq.n_modulation);
  j.Key("n_calibration_states").Value(static_cast<long long>(seq.states.size()));
  j.Key("modulation_matrix");
  Matrix(j, r.modulation);
  j.Key("modulation_matrix_err");
  Matrix(j, r.modulation_err);
  j.Key("demodulation_matrix");
  Matrix(j, r.demodulation);
  j.Key("efficiency").BeginObject();
  for (int i = 0; i < 4; ++i) j.Key(kStokesNames[i]).Value(r.efficiency(i));
  j.EndObject();
  j.Key("retardance_deg").Value(r.retardance_deg).Key("retardance_err_deg").Value(r.retardance_err_deg);
  j.Key("retarder_offset_deg").Value(r.retarder_offset_deg);
  j.Key("retarder_offset_err_deg").Value(r.retarder_offset_err_deg);
  j.Key("transmission").BeginObject();
  for (std::size_t k = 0; k < r.state_names.size(); ++k)
    if (std::isfinite(r.transmission[k])) j.Key(r.state_names[k]).Value(r.transmission[k]);
  j.EndObject();
  j.Key("transmission_err").BeginObject();
  for (std::size_t k = 0; k < r.state_names.size(); ++k)
    if (std::isfinite(r.transmission[k])) j.Key(r.state_names[k]).Value(r.transmission_err[k]);
  j.EndObject();
  j.Key("transmission_reference").Value(seq.states[static_cast<std::size_t>(seq.FirstOpen())].name);
  j.Key("dark_counts").Array(std::vector<double>(r.dark_counts.data(), r.dark_counts.data() + r.dark_counts.size()));
  j.Key("dark_counts_err")
      .Array(std::vector<double>(r.dark_counts_err.data(), r.dark_counts_err.data() + r.dark_counts_err.size()));
  j.Key("dark_fitted").Value(r.dark_fitted);
  j.Key("read_noise_counts").Value(r.read_noise_counts).Key("read_noise_estimated").Value(r.read_noise_estimated);
  j.Key("chi2").Value(r.chi2).Key("dof").Value(r.dof).Key("chi2_reduced").Value(r.chi2_reduced);
  j.Key("converged").Value(r.converged);
  Warnings(j, r.warnings);
  j.EndObject();
  out << "\n";
  return out.str();
}

std::vector<std::string> ModulationSummary(const pol::CalibrationSequence& seq, const pol::ModulationFitResult& r) {
  std::vector<std::string> t;
  t.push_back("calibration sequence: " + seq.source + " (" + std::to_string(seq.states.size()) + " states, " +
              std::to_string(seq.n_modulation) + " modulation states)");
  t.push_back("modulation matrix O (counts per unit open-beam intensity; rows m1..mN, columns I Q U V):");
  for (Eigen::Index k = 0; k < r.modulation.rows(); ++k) {
    std::string row = "  m" + std::to_string(k + 1) + " ";
    for (int i = 0; i < 4; ++i) row += " " + Num(r.modulation(k, i), "%10.5g") + " +-" + Num(r.modulation_err(k, i), "%-7.2g");
    t.push_back(row);
  }
  t.push_back("efficiencies (O normalised to max O_k0 = 1): I " + Num(r.efficiency(0), "%.4f") + "  Q " +
              Num(r.efficiency(1), "%.4f") + "  U " + Num(r.efficiency(2), "%.4f") + "  V " +
              Num(r.efficiency(3), "%.4f") + "  (QUV quadrature sum " +
              Num(r.efficiency.tail<3>().norm(), "%.4f") + ", optimum 1)");
  t.push_back("calibration retarder: retardance " + Num(r.retardance_deg, "%.4f") + " +- " +
              Num(r.retardance_err_deg, "%.2g") + " deg, fast-axis offset " + Num(r.retarder_offset_deg, "%+.4f") +
              " +- " + Num(r.retarder_offset_err_deg, "%.2g") + " deg");
  std::string tr = "transmissions (state '" + seq.states[static_cast<std::size_t>(seq.FirstOpen())].name +
                   "' = 1 by definition: only T*O is observable):";
  t.push_back(tr);
  for (std::size_t k = 0; k < r.state_names.size(); ++k)
    if (std::isfinite(r.transmission[k]))
      t.push_back("  " + r.state_names[k] + "  " + Num(r.transmission[k], "%.5f") + " +- " +
                  Num(r.transmission_err[k], "%.2g"));
  std::string dark = r.dark_fitted ? "dark offsets:" : "dark offsets (fixed, no dark state):";
  for (Eigen::Index j = 0; j < r.dark_counts.size(); ++j) dark += " " + Num(r.dark_counts(j), "%.5g");
  t.push_back(dark);
  t.push_back("read noise " + Num(r.read_noise_counts, "%.3g") + " counts" +
              (r.read_noise_estimated ? " (from the dark states)" : "") + ", chi2_reduced " +
              Num(r.chi2_reduced, "%.3f") + " (" + std::to_string(r.dof) + " dof)" +
              (r.converged ? "" : ", NOT CONVERGED"));
  for (const std::string& w : r.warnings) t.push_back("warning: " + w);
  return t;
}

void RunModulation(const ModulationArgs& a) {
  CheckOutputFile(a.png, a.overwrite, "--png");  // before any work (docs/cli.md, "Outputs")
  CheckOutputFile(a.output, a.overwrite, "-o");
  pol::ModulationFitOptions o;
  o.retardance_start_deg = a.retardance_start;
  o.gain_e_per_count = a.gain;
  o.read_noise_counts = a.read_noise;
  if (const std::string bad = o.Validate(); !bad.empty()) throw OptionError(bad);
  const pol::CalibrationSequence seq = pol::ReadCalibrationTable(a.table);
  const pol::ModulationFitResult r = pol::FitModulation(seq, o);
  const std::string json = ModulationJson(seq, r);
  const std::vector<std::string> summary = ModulationSummary(seq, r);
  if (!a.png.empty()) {
    ResidualPlotOptions p;
    p.title = "zeeline calibrate modulation: " + std::filesystem::path(seq.source).filename().string() +
              "  (residuals per calibration state)";
    p.row_labels = r.state_names;
    for (int j = 0; j < seq.n_modulation; ++j) p.series_labels.push_back("m" + std::to_string(j + 1));
    p.annotation = {"retardance " + Num(r.retardance_deg, "%.3f") + " +- " + Num(r.retardance_err_deg, "%.2g") + " deg",
                    "retarder offset " + Num(r.retarder_offset_deg, "%+.3f") + " +- " +
                        Num(r.retarder_offset_err_deg, "%.2g") + " deg",
                    "efficiency I " + Num(r.efficiency(0), "%.3f") + "  Q " + Num(r.efficiency(1), "%.3f") + "  U " +
                        Num(r.efficiency(2), "%.3f") + "  V " + Num(r.efficiency(3), "%.3f"),
                    "chi2_reduced " + Num(r.chi2_reduced, "%.3f") + " (" + std::to_string(r.dof) + " dof)",
                    "read noise " + Num(r.read_noise_counts, "%.3g") + " counts",
                    "dashed: +-1 and +-3 sigma"};
    for (const std::string& w : r.warnings)
      for (std::size_t i = 0; i < w.size(); i += 60) p.annotation.push_back((i ? "  " : "warning: ") + w.substr(i, 60));
    try {
      WriteResidualPlotPng(a.png, r.normalised_residuals, p);
    } catch (const std::runtime_error& e) {
      throw OutputError(e.what());
    }
  }
  if (!a.output.empty()) WriteTextFile(a.output, json);
  if (a.json) {
    std::cout << json;
    return;
  }
  for (const std::string& l : summary) std::printf("%s\n", l.c_str());
  if (!a.output.empty()) std::printf("\ncalibration: %s\n", a.output.c_str());
  if (!a.png.empty()) std::printf("picture: %s\n", a.png.c_str());
}

void AddModulation(CLI::App* parent) {
  auto a = std::make_shared<ModulationArgs>();
  auto* cmd = parent->add_subcommand("modulation",
                                     "Fit the N x 4 modulation matrix, retarder retardance and offset, transmissions "
                                     "and darks to a calibration sequence");
  cmd->footer(
      "TABLE is CSV with the header state_name,polarizer_deg,retarder_deg,m1,...,mN: one row per calibration\n"
      "state (blank angle = element out of the beam; names dark... = light blocked, open... = nothing in the\n"
      "beam; the first open... state has transmission 1). Light: source -> polariser -> retarder -> polarimeter.\n"
      "A sequence that cannot constrain part of O (e.g. no circular light: the V column) is refused (exit 1).\n"
      "JSON keys and the model: docs/polarimetry.md.\n"
      "Examples:\n"
      "  zeeline calibrate modulation demo_maps/calibration/bench_sequence.csv --png cal.png -o cal.json\n"
      "  zeeline calibrate modulation seq.csv --json --read-noise 4.5 --gain 1.8");
  cmd->add_option("table", a->table, "calibration-sequence table (CSV)")->required();
  cmd->add_flag("--json", a->json, "print the result as one JSON object");
  cmd->add_option("--png", a->png, "draw the normalised residuals per state into this PNG");
  cmd->add_option("-o,--output", a->output, "write the calibration (the JSON object) to this file");
  cmd->add_option("--retardance-start", a->retardance_start, "starting retardance of the calibration retarder, deg")
      ->capture_default_str();
  cmd->add_option("--gain", a->gain, "detector gain, photo-electrons per count (photon noise)")->capture_default_str();
  cmd->add_option("--read-noise", a->read_noise, "read noise in counts (default: from the dark states)");
  cmd->add_flag("--overwrite", a->overwrite, "replace existing -o / --png outputs");
  cmd->callback([a] { RunModulation(*a); });
}


// ---------------------------------------------------------------- crosstalk
struct CrosstalkArgs {
  std::string cube, continuum, output;
  double strong_v_sigma = 5.0, depth_fraction = 0.002;
  int v_sign = 1;
  bool json = false, correct = false, overwrite = false;
};

std::vector<std::pair<double, double>> ParseRanges(const std::string& text) {
  std::vector<std::pair<double, double>> out;
  std::stringstream in(text);
  std::string item;
  while (std::getline(in, item, ',')) {
    const std::size_t colon = item.find(':');
    if (colon == std::string::npos)
      throw OptionError("--continuum: '" + item + "' is not a range START:END (e.g. 630.10nm:630.13nm)");
    out.emplace_back(ParseWavelength_nm(item.substr(0, colon)), ParseWavelength_nm(item.substr(colon + 1)));
  }
  if (out.empty()) throw OptionError("--continuum: no range given (START:END,...)");
  return out;
}

void PutCoefficient(JsonWriter& j, const char* name, double value, double err) {
  j.Key(name).Value(value);
  j.Key(std::string(name) + "_err").Value(err);
}

void RunCrosstalk(const CrosstalkArgs& a) {
  if (a.correct && a.output.empty()) throw OptionError("--correct needs -o OUT.fits");
  if (!a.correct && !a.output.empty()) throw OptionError("-o is the corrected cube: add --correct");
  if (a.correct) CheckOutputFile(a.output, a.overwrite, "-o");
  pol::CrosstalkOptions o;
  if (!a.continuum.empty()) o.continuum_ranges_nm = ParseRanges(a.continuum);
  o.strong_v_sigma = a.strong_v_sigma;
  o.continuum_depth_fraction = a.depth_fraction;
  if (const std::string bad = o.Validate(); !bad.empty()) throw OptionError(bad);
  if (a.v_sign != 1 && a.v_sign != -1) throw OptionError("--v-sign = " + std::to_string(a.v_sign) + ": need +1 or -1");
  CubeReadOptions ro;
  ro.v_sign = a.v_sign;
  CubeReader reader(a.cube, ro);
  const pol::CrosstalkResult r = pol::EstimateCrosstalk(reader, o);
  if (a.correct) {
    char buf[400];
    std::snprintf(buf, sizeof buf,
                  "zeeline calibrate crosstalk: I->Q %.6g I->U %.6g I->V %.6g V->Q %.6g V->U %.6g removed",
                  r.i_to_q, r.i_to_u, r.i_to_v, r.v_to_q, r.v_to_u);
    try {
      WriteStokesTransformedCube(reader.info(), a.output, r.CorrectionMatrix(), a.v_sign,
                                 {buf, "(V' = V - aV I; Q' = Q - aQ I - bQ V'; U' = U - aU I - bU V')"}, a.overwrite);
    } catch (const FitsError& e) {
      throw OutputError(e.what());
    }
  }
  if (a.json) {
    JsonWriter j(std::cout);
    j.BeginObject();
    j.Key("input").Value(a.cube);
    PutCoefficient(j, "I_to_Q", r.i_to_q, r.i_to_q_err);
    PutCoefficient(j, "I_to_U", r.i_to_u, r.i_to_u_err);
    PutCoefficient(j, "I_to_V", r.i_to_v, r.i_to_v_err);
    PutCoefficient(j, "V_to_Q", r.v_to_q, r.v_to_q_err);
    PutCoefficient(j, "V_to_U", r.v_to_u, r.v_to_u_err);
    j.Key("continuum_wavelengths_nm").Array(r.continuum_wavelengths_nm);
    j.Key("continuum_automatic").Value(r.continuum_automatic);
    j.Key("continuum_samples").Value(r.continuum_samples);
    j.Key("strong_v_samples").Value(r.strong_v_samples);
    j.Key("rejected_pixels").Value(r.rejected_pixels);
    j.Key("v_noise").Value(r.v_noise);
    if (a.correct)
      j.Key("corrected_output").Value(a.output);
    else
      j.Key("corrected_output").Null();
    Warnings(j, r.warnings);
    j.EndObject();
    std::cout << "\n";
    return;
  }
  auto line = [](const char* name, double v, double e) {
    std::printf("  %-7s %+.4e +- %.2e\n", name, v, e);
  };
  std::printf("crosstalk of %s (%zu continuum wavelengths%s, %lld continuum samples, %lld strong-V samples):\n",
              a.cube.c_str(), r.continuum_wavelengths_nm.size(), r.continuum_automatic ? " from the mean I" : "",
              r.continuum_samples, r.strong_v_samples);
  line("I -> Q", r.i_to_q, r.i_to_q_err);
  line("I -> U", r.i_to_u, r.i_to_u_err);
  line("I -> V", r.i_to_v, r.i_to_v_err);
  line("V -> Q", r.v_to_q, r.v_to_q_err);
  line("V -> U", r.v_to_u, r.v_to_u_err);
  for (const std::string& w : r.warnings) std::printf("warning: %s\n", w.c_str());
  if (a.correct) std::printf("\ncorrected cube (input layout and WCS): %s\n", a.output.c_str());
}

void AddCrosstalk(CLI::App* parent) {
  auto a = std::make_shared<CrosstalkArgs>();
  auto* cmd = parent->add_subcommand("crosstalk", "Estimate (and remove) I -> Q,U,V and V -> Q,U crosstalk of a Stokes cube");
  cmd->footer(
      "I -> Q,U,V from continuum wavelengths (found from the mean I profile, or --continuum), then V -> Q,U by\n"
      "regression in strong-V samples. --correct -o OUT.fits writes the corrected cube in the input's layout\n"
      "and WCS. Model and JSON keys: docs/polarimetry.md.\n"
      "Examples:\n"
      "  zeeline calibrate crosstalk demo_maps/calibration/crosstalk_region.fits --json\n"
      "  zeeline calibrate crosstalk scan.fits --continuum 630.08nm:630.11nm,630.36nm:630.40nm --correct -o clean.fits");
  cmd->add_option("cube", a->cube, "Stokes I,Q,U,V FITS cube")->required();
  cmd->add_flag("--json", a->json, "print the coefficients as one JSON object");
  cmd->add_flag("--correct", a->correct, "write the corrected cube (with -o)");
  cmd->add_option("-o,--output", a->output, "corrected cube (with --correct)");
  cmd->add_option("--continuum", a->continuum, "continuum ranges START:END[,START:END...] (default: from the mean I)");
  cmd->add_option("--continuum-depth", a->depth_fraction,
                  "automatic continuum: mean I within this fraction of the line depth below its maximum")
      ->capture_default_str();
  cmd->add_option("--strong-v-sigma", a->strong_v_sigma, "strong-V samples: |V| above this many sigma")->capture_default_str();
  cmd->add_option("--v-sign", a->v_sign, "+1, or -1 for data using the IAU 1974 sign of V")->capture_default_str();
  cmd->add_flag("--overwrite", a->overwrite, "replace an existing -o output");
  cmd->callback([a] { RunCrosstalk(*a); });
}

// ---------------------------------------------------------------- magnet
const char* kMagnetSafety =
    "safety: strong magnetic fields endanger people with pacemakers and implants, turn ferromagnetic objects into "
    "projectiles and can quench superconducting magnets; discharge lamps run at high voltage and emit UV. Follow "
    "your local safety rules and licensed practice (docs/polarimetry.md).";

struct MagnetArgs {
  std::vector<std::string> spectra;
  LineSelectionArgs line;
  RegimeArgs regime;
  std::string field, instrument_fwhm, png;
  double damping = 0.0;
  int v_sign = 1;
  bool json = false, overwrite = false;
};

pol::MagnetSpectrum ParseSpectrumArg(const std::string& arg, int v_sign) {
  const std::size_t colon = arg.rfind(':');
  const std::size_t comma = colon == std::string::npos ? std::string::npos : arg.find(',', colon);
  if (colon == std::string::npos || comma == std::string::npos)
    throw OptionError("--spectrum '" + arg + "': expected FILE:INCLINATION,AZIMUTH (degrees), e.g. long.csv:0,0");
  pol::MagnetSpectrum s;
  try {
    std::size_t used = 0;
    const std::string inc = arg.substr(colon + 1, comma - colon - 1), az = arg.substr(comma + 1);
    s.inclination_deg = std::stod(inc, &used);
    if (used != inc.size()) throw std::invalid_argument(inc);
    s.azimuth_deg = std::stod(az, &used);
    if (used != az.size()) throw std::invalid_argument(az);
  } catch (const std::exception&) {
    throw OptionError("--spectrum '" + arg + "': INCLINATION,AZIMUTH must be two numbers in degrees");
  }
  if (!(s.inclination_deg >= 0.0 && s.inclination_deg <= 180.0))
    throw OptionError("--spectrum '" + arg + "': inclination " + std::to_string(s.inclination_deg) +
                      " deg outside 0..180");
  SpectrumReadOptions ro;
  ro.v_sign = v_sign;
  s.spectrum = ReadSpectrum(arg.substr(0, colon), ro);
  return s;
}

std::string MagnetPngPath(const std::string& png, std::size_t k) {
  if (k == 0) return png;
  const std::filesystem::path p(png);
  return (p.parent_path() / (p.stem().string() + "_" + std::to_string(k + 1) + p.extension().string())).string();
}

void RunMagnet(const MagnetArgs& a) {
  if (!a.png.empty())
    for (std::size_t k = 0; k < a.spectra.size(); ++k) CheckOutputFile(MagnetPngPath(a.png, k), a.overwrite, "--png");
  if (a.spectra.empty()) throw OptionError("give at least one --spectrum FILE:INCLINATION,AZIMUTH");
  if (a.v_sign != 1 && a.v_sign != -1) throw OptionError("--v-sign = " + std::to_string(a.v_sign) + ": need +1 or -1");
  const SelectedLine line = ResolveLine(a.line);
  pol::MagnetFitOptions o;
  o.nominal_field_gauss = ParseField_gauss(a.field);
  o.pattern = line.pattern;
  if (!a.instrument_fwhm.empty()) o.instrument_fwhm_nm = ParseWavelength_nm(a.instrument_fwhm);
  o.damping = a.damping;
  std::vector<pol::MagnetSpectrum> spectra;
  for (const std::string& s : a.spectra) spectra.push_back(ParseSpectrumArg(s, a.v_sign));
  o.rest_wavelength_nm = line.rest_wavelength_nm;
  const auto& frame = spectra.front().spectrum.frame;
  if (line.frame && frame && *line.frame != *frame)
    o.rest_wavelength_nm = ConvertWavelength_nm(line.rest_wavelength_nm, *line.frame, *frame);
  if (const std::string bad = o.Validate(); !bad.empty()) throw OptionError(bad);
  // Beyond the linear regime (docs/atomic.md): the mixed-regime pattern at the fitted field, refitted until the
  // field settles (1e-5 relative, at most 6 fits); `auto` when the nominal field exceeds a tenth of the
  // line's linear breakdown field.
  const ZeemanRegime regime = ZeemanRegimeFromString(a.regime.regime);
  const auto mixed = ResolveMixedLine(line, a.line, a.regime);
  const double breakdown = mixed ? LinearBreakdownField_gauss(*mixed) : std::nan("");
  const bool use_mixed = mixed && regime != ZeemanRegime::kZeeman &&
                         (regime == ZeemanRegime::kPaschenBack || o.nominal_field_gauss > 0.1 * breakdown);
  std::string regime_note = use_mixed ? "mixed-regime (Paschen-Back) pattern at the fitted field"
                                      : (mixed ? "linear Zeeman pattern" : "linear Zeeman pattern (no term energies)");
  pol::MagnetFitResult r;
  if (use_mixed) {
    double b = o.nominal_field_gauss;
    bool settled = false;
    int fits = 0;
    while (!settled && fits < 6) {
      o.pattern = ComputePaschenBackPattern(*mixed, b).pattern;
      o.pattern.g_eff = SigmaHalfSeparation(o.pattern);
      r = pol::FitMagnet(spectra, o);
      ++fits;
      const double b_new = r.field_scale * o.nominal_field_gauss;
      settled = std::fabs(b_new - b) < 1e-5 * b;
      if (!(b_new > 0.0)) break;
      b = b_new;
    }
    regime_note += " (" + std::to_string(fits) + " fits" + (settled ? ")" : ", NOT settled: treat f with care)");
  } else {
    r = pol::FitMagnet(spectra, o);
    if (mixed && o.nominal_field_gauss > 0.1 * breakdown)
      regime_note += "; warning: the field exceeds a tenth of the linear breakdown field (use --regime auto)";
  }

  if (!a.png.empty()) {
    for (std::size_t k = 0; k < spectra.size(); ++k) {
      const Spectrum1D& s = spectra[k].spectrum;
      const Eigen::Index n = static_cast<Eigen::Index>(s.size());
      Eigen::ArrayXd w(n);
      StokesArray st(n, 4);
      for (Eigen::Index i = 0; i < n; ++i) {
        const std::size_t u = static_cast<std::size_t>(i);
        w(i) = s.wavelength_nm[u];
        st(i, 0) = s.I[u];
        st(i, 1) = s.Q[u];
        st(i, 2) = s.U[u];
        st(i, 3) = s.V[u];
      }
      StokesPlotOptions p;
      p.centre_nm = o.rest_wavelength_nm;
      p.divide_by_continuum = false;
      p.title = "zeeline calibrate magnet: " + std::filesystem::path(s.source).filename().string() + "  (inclination " +
                Num(spectra[k].inclination_deg, "%g") + ", azimuth " + Num(spectra[k].azimuth_deg, "%g") + " deg)";
      for (int q = 0; q < 4; ++q) {
        PlotCurve c;
        c.panel = q;
        c.y = r.spectra[k].model.col(q).array();
        p.overlays.push_back(c);
      }
      p.annotation = {"field scale f = " + Num(r.field_scale, "%.5f") + " +- " + Num(r.field_scale_err, "%.2g"),
                      "B = " + Num(r.field_scale * o.nominal_field_gauss, "%.1f") + " G (nominal " +
                          Num(o.nominal_field_gauss, "%.1f") + " G)",
                      "v_sign " + std::to_string(r.v_sign) + ", chi2_reduced " + Num(r.chi2_reduced, "%.3f"),
                      "red: model (observed = X emitted)"};
      try {
        WriteStokesPlotPng(MagnetPngPath(a.png, k), w, st, p);
      } catch (const PlotError& e) {
        throw OutputError(e.what());
      }
    }
  }
  auto matrix_json = [&](JsonWriter& j, const Eigen::Matrix4d& m) {
    j.BeginArray();
    for (int row = 0; row < 4; ++row) {
      j.BeginArray();
      for (int c = 0; c < 4; ++c) {
        if (r.column_constrained[static_cast<std::size_t>(c)])
          j.Value(m(row, c));
        else
          j.Null();
      }
      j.EndArray();
    }
    j.EndArray();
  };
  if (a.json) {
    JsonWriter j(std::cout);
    j.BeginObject();
    j.Key("line").Value(line.description);
    j.Key("nominal_field_gauss").Value(o.nominal_field_gauss);
    j.Key("regime").Value(use_mixed ? "paschen-back" : "zeeman").Key("linear_breakdown_gauss").Value(breakdown);
    j.Key("regime_note").Value(regime_note);
    j.Key("lorentz_shift_nm").Value(LorentzUnit_nm(o.rest_wavelength_nm, o.nominal_field_gauss));
    j.Key("field_scale").Value(r.field_scale).Key("field_scale_err").Value(r.field_scale_err);
    j.Key("field_gauss").Value(r.field_scale * o.nominal_field_gauss);
    j.Key("field_err_gauss").Value(r.field_scale_err * o.nominal_field_gauss);
    j.Key("response_matrix");
    matrix_json(j, r.response);
    j.Key("response_matrix_err");
    matrix_json(j, r.response_err);
    j.Key("unconstrained").BeginArray();
    for (const std::string& c : r.unconstrained) j.Value(c);
    j.EndArray();
    if (r.v_sign != 0)
      j.Key("v_sign").Value(r.v_sign);
    else
      j.Key("v_sign").Null();
    j.Key("doppler_width_nm").Value(r.doppler_width_nm).Key("doppler_width_err_nm").Value(r.doppler_width_err_nm);
    j.Key("chi2_reduced").Value(r.chi2_reduced).Key("dof").Value(r.dof).Key("converged").Value(r.converged);
    j.Key("spectra").BeginArray();
    for (std::size_t k = 0; k < spectra.size(); ++k) {
      const pol::MagnetSpectrumFit& f = r.spectra[k];
      j.BeginObject();
      j.Key("file").Value(spectra[k].spectrum.source);
      j.Key("inclination_deg").Value(spectra[k].inclination_deg).Key("azimuth_deg").Value(spectra[k].azimuth_deg);
      j.Key("centre_nm").Value(f.centre_nm).Key("centre_err_nm").Value(f.centre_err_nm);
      j.Key("amplitude").Value(f.amplitude).Key("amplitude_err").Value(f.amplitude_err);
      j.Key("background").Value(f.background).Key("background_err").Value(f.background_err);
      j.Key("noise").Array(std::vector<double>(f.noise.begin(), f.noise.end()));
      j.Key("chi2_reduced").Value(f.chi2_reduced);
      j.EndObject();
    }
    j.EndArray();
    Warnings(j, r.warnings);
    j.Key("safety").Value(kMagnetSafety);
    j.EndObject();
    std::cout << "\n";
    Notice(kMagnetSafety);
    return;
  }
  std::printf("%s\n\n", kMagnetSafety);
  std::printf("line: %s\n", line.description.c_str());
  std::printf("regime: %s -- %s; linear breakdown field %s\n", use_mixed ? "paschen-back" : "zeeman",
              regime_note.c_str(), std::isnan(breakdown) ? "unknown" : Num(breakdown, "%.5g G").c_str());
  std::printf("field scale f = B_true / B_nominal = %.5f +- %.2g  (B = %.1f +- %.1f G, nominal %.1f G)\n", r.field_scale,
              r.field_scale_err, r.field_scale * o.nominal_field_gauss, r.field_scale_err * o.nominal_field_gauss,
              o.nominal_field_gauss);
  std::printf("Doppler width %.4g +- %.2g pm, chi2_reduced %.3f (%d dof)%s\n", r.doppler_width_nm * 1e3,
              r.doppler_width_err_nm * 1e3, r.chi2_reduced, r.dof, r.converged ? "" : ", NOT CONVERGED");
  std::printf("response matrix X (observed = X emitted; rows I Q U V, columns I Q U V; X_II = 1):\n");
  for (int row = 0; row < 4; ++row) {
    std::string t = std::string("  ") + kStokesNames[row] + " ";
    for (int c = 0; c < 4; ++c)
      t += r.column_constrained[static_cast<std::size_t>(c)]
               ? " " + Num(r.response(row, c), "%+8.4f") + " +-" + Num(r.response_err(row, c), "%-7.2g")
               : std::string(15, ' ') + "null";
    std::printf("%s\n", t.c_str());
  }
  if (!r.unconstrained.empty()) {
    std::string u;
    for (const std::string& c : r.unconstrained) u += (u.empty() ? "" : ", ") + c;
    std::printf("unconstrained columns (null; no spectrum excites them independently): %s\n", u.c_str());
  }
  std::printf("v_sign (sign of the V response, a handedness check): %s\n",
              r.v_sign == 0 ? "not determined" : (r.v_sign > 0 ? "+1" : "-1 (V is flipped somewhere in the chain)"));
  for (std::size_t k = 0; k < spectra.size(); ++k)
    std::printf("  %s (incl %g, azim %g deg): centre %.5f nm, amplitude %.4g, chi2_reduced %.3f\n",
                spectra[k].spectrum.source.c_str(), spectra[k].inclination_deg, spectra[k].azimuth_deg,
                r.spectra[k].centre_nm, r.spectra[k].amplitude, r.spectra[k].chi2_reduced);
  for (const std::string& w : r.warnings) std::printf("warning: %s\n", w.c_str());
  if (!a.png.empty())
    for (std::size_t k = 0; k < spectra.size(); ++k) std::printf("picture: %s\n", MagnetPngPath(a.png, k).c_str());
}

void AddMagnet(CLI::App* parent) {
  auto a = std::make_shared<MagnetArgs>();
  auto* cmd = parent->add_subcommand(
      "magnet", "Check sign, scale and crosstalk of the whole chain on a lamp line in a magnet of known field");
  cmd->footer(
      "Each --spectrum is a demodulated lamp spectrum (measure's table or FITS formats) with the field geometry:\n"
      "inclination of B from the line of sight (toward the observer) and azimuth from +x, in degrees.\n"
      "Fits the field scale f = B_true/B_nominal, the line width, centre/amplitude/background per spectrum and the\n"
      "response matrix X (observed = X emitted, X_II = 1) in the columns the geometries excite.\n"
      "SAFETY: strong magnets (pacemakers, implants, projectiles, quench), high-voltage discharge lamps and UV:\n"
      "follow local safety rules and licensed practice. Model and JSON keys: docs/polarimetry.md.\n"
      "Examples:\n"
      "  zeeline calibrate magnet --spectrum demo_maps/calibration/cd_long.csv:0,0 \\\n"
      "      --spectrum demo_maps/calibration/cd_trans.csv:90,0 --line CdI_6438 --catalog demo_maps/lines.csv \\\n"
      "      --field 10kG --instrument-fwhm 2pm --png magnet.png\n"
      "  zeeline calibrate magnet --spectrum ne.fits:0,0 --lower 'jK(2P3/2,s,3/2,2)' --upper 'jK(2P3/2,p,5/2,3)' \\\n"
      "      --wavelength 640.2248nm --field 1.5T --json");
  cmd->add_option("--spectrum", a->spectra, "FILE:INCLINATION,AZIMUTH (repeatable)")->required();
  AddLineSelectionOptions(cmd, a->line, "default: the frame of the spectra (FITS CTYPE1), tables have none");
  cmd->add_option("--field", a->field, "nominal field of the magnet, e.g. 10kG, 1T")->required();
  AddRegimeOptions(cmd, a->regime);
  cmd->add_option("--instrument-fwhm", a->instrument_fwhm, "Gaussian instrument profile FWHM, e.g. 2pm (default 0)");
  cmd->add_option("--damping", a->damping, "Voigt damping of the components (Doppler units), kept fixed")
      ->capture_default_str();
  cmd->add_option("--v-sign", a->v_sign, "+1, or -1 for data using the IAU 1974 sign of V")->capture_default_str();
  cmd->add_flag("--json", a->json, "print the result as one JSON object");
  cmd->add_option("--png", a->png, "data and model per spectrum: P.png, then P_2.png, ...");
  cmd->add_flag("--overwrite", a->overwrite, "replace existing --png outputs");
  cmd->callback([a] { RunMagnet(*a); });
}

}  // namespace

void AddCalibrateCommand(CLI::App& app) {
  auto* cmd = app.add_subcommand("calibrate", "Polarimeter calibration: modulation matrix, crosstalk, lab-magnet check");
  cmd->require_subcommand(1);
  cmd->footer("Run 'zeeline calibrate <modulation|crosstalk|magnet> --help'. Model and formats: docs/polarimetry.md.");
  AddModulation(cmd);
  AddCrosstalk(cmd);
  AddMagnet(cmd);
}

}  // namespace zeeline::cli
