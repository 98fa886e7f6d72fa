// `zeeline measure`: everything about one polarised spectrum -- Zeeman components of I, Stokes-profile
// characteristics, the field from each estimator side by side, a picture (a thin layer over measure/).
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>
#include <sstream>
#include <string>
#include <utility>
#include <vector>

#include "cli/commands.hpp"
#include "cli/json_writer.hpp"
#include "cli/notices.hpp"
#include "cli/line_selection.hpp"
#include "cli/measure_command.hpp"
#include "cli/output_paths.hpp"
#include "synth/profile_plot.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"
#include "zeeline/io/air_vacuum.hpp"
#include "zeeline/io/cube_reader.hpp"
#include "zeeline/io/spatial_wcs.hpp"
#include "zeeline/maps/spectral_derivative.hpp"
#include "zeeline/measure/cube_pixel.hpp"
#include "zeeline/measure/measurement.hpp"

namespace zeeline::cli {
namespace {

const char* kSafetyNote =
    "safety: this looks like a laboratory emission line -- electromagnets (strong fields, stored energy), "
    "discharge lamps (high voltage, UV) need the precautions of your local rules and licensed practice.";

std::string Num(double v, const char* format = "%.6g") {
  if (!std::isfinite(v)) return "n/a";
  char buf[64];
  std::snprintf(buf, sizeof buf, format, v);
  return buf;
}

std::string PlusMinus(const Measured& m, const char* format = "%.4g") {
  if (!m.defined()) return "n/a";
  return Num(m.value, format) + " +- " + Num(m.err, "%.2g");
}

// The text summary gives wavelength offsets, widths and areas in pm (absolute wavelengths in nm); JSON
// keeps nm everywhere (docs/cli.md).
std::string PlusMinusPm(const Measured& m_nm, const char* format = "%.4g") {
  if (!m_nm.defined()) return "n/a";
  return Num(m_nm.value * 1e3, format) + " +- " + Num(m_nm.err * 1e3, "%.2g");
}

// JSON: "name_unit": value, "name_err_unit": err (unit may be empty).
void Put(JsonWriter& j, const std::string& name, const std::string& unit, double value, double err) {
  const std::string u = unit.empty() ? "" : "_" + unit;
  j.Key(name + u).Value(value);
  j.Key(name + "_err" + u).Value(err);
}
void Put(JsonWriter& j, const std::string& name, const std::string& unit, const Measured& m) {
  Put(j, name, unit, m.value, m.err);
}

void WriteEstimate(JsonWriter& j, const MethodEstimate& e) {
  j.Key(e.method).BeginObject();
  j.Key("available").Value(e.available).Key("valid").Value(e.valid).Key("verdict").Value(e.verdict);
  Put(j, "blos", "gauss", e.blos_gauss);
  Put(j, "btrans", "gauss", e.btrans_gauss);
  Put(j, "field", "gauss", e.field_gauss);
  Put(j, "azimuth", "deg", e.azimuth_deg);
  Put(j, "vlos", "kms", e.vlos_kms);
  j.EndObject();
}

void WriteJson(std::ostream& out, const Spectrum1D& s, const SelectedLine& line, const MeasureOptions& o,
               const Measurement& m) {
  JsonWriter j(out);
  j.BeginObject();
  j.Key("input").BeginObject();
  j.Key("file").Value(s.source).Key("samples").Value(static_cast<long long>(s.size()));
  j.Key("wavelength_min_nm").Value(s.wavelength_nm.front()).Key("wavelength_max_nm").Value(s.wavelength_nm.back());
  if (s.frame)
    j.Key("frame").Value(ToString(*s.frame));
  else
    j.Key("frame").Null();
  j.Key("stokes").Value(std::string("I") + (s.has_qu() ? "QU" : "") + (s.has_v() ? "V" : ""));
  j.EndObject();
  j.Key("line").BeginObject();
  j.Key("description").Value(line.description);
  j.Key("rest_wavelength_nm").Value(m.rest_wavelength_nm).Key("g_eff").Value(m.g_eff).Key("G").Value(m.G);
  j.Key("lorentz_shift_per_gauss_nm").Value(LorentzUnit_nm(m.rest_wavelength_nm, 1.0));
  j.Key("regime").Value(m.regime).Key("linear_breakdown_gauss").Value(m.linear_breakdown_gauss);
  j.Key("regime_note").Value(m.regime_note);
  j.EndObject();
  j.Key("sense").Value(ToString(m.sense)).Key("sense_detected").Value(m.sense_detected);
  j.Key("window_halfwidth_nm").Value(m.window_halfwidth_nm);
  j.Key("continuum").BeginObject();
  j.Key("level").Value(m.continuum.continuum).Key("noise_I").Value(m.continuum.noise_I);
  j.Key("noise_Q").Value(m.continuum.noise_Q).Key("noise_U").Value(m.continuum.noise_U);
  j.Key("noise_V").Value(m.continuum.noise_V).Key("samples").Value(static_cast<long long>(m.continuum.samples));
  j.EndObject();
  j.Key("line_peak_sigma").Value(m.line_peak_sigma);

  const ComponentFitResult& c = m.components;
  j.Key("components").BeginObject();
  j.Key("mode").Value(c.pattern_mode ? "pattern" : "free").Key("ok").Value(c.ok).Key("message").Value(c.message);
  j.Key("instrument_fwhm_nm").Value(o.instrument_fwhm_nm);
  Put(j, "centre", "nm", c.centre_nm, c.centre_err_nm);
  Put(j, "vlos", "kms", c.vlos_kms, c.vlos_err_kms);
  Put(j, "doppler_width", "nm", c.doppler_width_nm, c.doppler_width_err_nm);
  Put(j, "damping", "", c.damping, c.damping_err);
  j.Key("damping_fitted").Value(c.damping_fitted);
  Put(j, "saturation", "", c.saturation, c.saturation_err);
  j.Key("saturation_fitted").Value(c.saturation_fitted);
  j.Key("component_fwhm_nm").Value(c.component_fwhm_nm);
  Put(j, "sigma_separation", "nm", c.sigma_separation_nm, c.sigma_separation_err_nm);
  if (c.has_field)
    Put(j, "field", "gauss", c.field_gauss, c.field_err_gauss);
  else
    Put(j, "field", "gauss", std::nan(""), std::nan(""));
  j.Key("resolved").Value(c.resolved);
  j.Key("continuum").Value(c.continuum).Key("continuum_slope_per_nm").Value(c.continuum_slope);
  j.Key("chi2_reduced").Value(c.chi2_reduced).Key("dof").Value(c.dof).Key("iterations").Value(c.iterations);
  j.Key("groups").BeginArray();
  for (const FittedComponent& g : c.components) {
    j.BeginObject();
    j.Key("label").Value(g.label);
    Put(j, "position", "nm", g.position_nm, g.position_err_nm);
    j.Key("offset_nm").Value(g.position_nm - m.rest_wavelength_nm);
    Put(j, "area", "", g.area, g.area_err);
    j.Key("fwhm_nm").Value(g.fwhm_nm);
    j.EndObject();
  }
  j.EndArray();
  j.Key("lines").BeginArray();
  for (const PlacedLine& l : c.lines) {
    j.BeginObject();
    j.Key("q").Value(l.q).Key("shift_lorentz").Value(l.shift_lorentz).Key("strength").Value(l.strength);
    j.Key("position_nm").Value(l.position_nm).Key("area").Value(l.area);
    j.EndObject();
  }
  j.EndArray();
  j.EndObject();

  const StokesCharacteristics& h = m.characteristics;
  j.Key("characteristics").BeginObject();
  j.Key("has_v").Value(h.has_v).Key("has_qu").Value(h.has_qu).Key("v_signal_sigma").Value(h.v_signal_sigma);
  j.Key("uncertainty").Value("standard deviation over " + std::to_string(o.realisations) + " noise realisations");
  Put(j, "line_area", "nm", h.line_area_nm);
  Put(j, "line_centre", "nm", h.line_centre_nm);
  Put(j, "v_blue_amplitude", "", h.v_blue_amplitude);
  Put(j, "v_red_amplitude", "", h.v_red_amplitude);
  Put(j, "v_blue_position", "nm", h.v_blue_position_nm);
  Put(j, "v_red_position", "nm", h.v_red_position_nm);
  Put(j, "v_blue_area", "nm", h.v_blue_area_nm);
  Put(j, "v_red_area", "nm", h.v_red_area_nm);
  Put(j, "amplitude_asymmetry", "", h.amplitude_asymmetry);
  Put(j, "area_asymmetry", "", h.area_asymmetry);
  Put(j, "zero_crossing", "nm", h.zero_crossing_nm);
  Put(j, "zero_crossing_vlos", "kms", h.zero_crossing_vlos_kms);
  Put(j, "v_peak_separation", "nm", h.v_peak_separation_nm);
  Put(j, "net_circular_polarisation", "", h.net_circular_polarisation);
  Put(j, "net_circular_polarisation_per_continuum", "nm", h.net_circular_polarisation_per_continuum_nm);
  Put(j, "linear_polarisation", "", h.linear_polarisation);
  Put(j, "linear_polarisation_per_continuum", "nm", h.linear_polarisation_per_continuum_nm);
  Put(j, "linear_polarisation_angle", "deg", h.linear_polarisation_angle_deg);
  Put(j, "linear_polarisation_angle_core", "deg", h.linear_polarisation_angle_core_deg);
  j.EndObject();

  j.Key("estimates").BeginObject();
  WriteEstimate(j, m.wfa);
  WriteEstimate(j, m.cog);
  WriteEstimate(j, m.split);
  WriteEstimate(j, m.split_3gauss);
  WriteEstimate(j, m.me);
  j.EndObject();
  j.Key("splitting_ratio").Value(m.splitting_ratio);
  j.Key("field_scale_gauss").Value(m.field_scale_gauss);
  j.Key("observed_width_nm").Value(m.observed_width_nm);
  j.EndObject();
  out << "\n";
}

// Human-readable summary (also the PNG's text block).
std::vector<std::string> Summary(const Spectrum1D& s, const SelectedLine& line, const Measurement& m) {
  std::vector<std::string> t;
  auto add = [&](const std::string& x) { t.push_back(x); };
  const double l0 = m.rest_wavelength_nm;
  add("spectrum: " + s.source + " (" + std::to_string(s.size()) + " samples, Stokes I" + (s.has_qu() ? "QU" : "") +
      (s.has_v() ? "V" : "") + ")");
  add("line: " + line.description);
  add("regime: " + m.regime + " -- " + m.regime_note);
  add(ToString(m.sense) + " line" + (m.sense_detected ? " (detected)" : " (given)") + ", window +-" +
      Num(m.window_halfwidth_nm * 1e3, "%.4g") + " pm, peak " + Num(m.line_peak_sigma, "%.0f") + " sigma");
  const ComponentFitResult& c = m.components;
  add("");
  add(std::string("components (") + (c.pattern_mode ? "Zeeman pattern" : "free") + " fit" +
      (c.ok ? "" : ", FAILED: " + c.message) + "):");
  if (c.ok) {
    for (const FittedComponent& g : c.components)
      add("  " + g.label + std::string(9 - std::min<std::size_t>(8, g.label.size()), ' ') + "offset " +
          Num((g.position_nm - l0) * 1e3, "%+.4f") + " +- " + Num(g.position_err_nm * 1e3, "%.2g") + " pm  area " +
          Num(g.area, "%.4g") + " +- " + Num(g.area_err, "%.2g"));
    add("  Doppler width " + Num(c.doppler_width_nm * 1e3, "%.4g") + " +- " + Num(c.doppler_width_err_nm * 1e3, "%.2g") +
        " pm, damping " + Num(c.damping, "%.3g") + (c.damping_fitted ? "" : " (fixed)") + ", FWHM " +
        Num(c.component_fwhm_nm * 1e3, "%.4g") + " pm" +
        (c.saturation_fitted ? ", saturation " + Num(c.saturation, "%.3g") : std::string()));
    add("  sigma separation " + Num(c.sigma_separation_nm * 1e3, "%.4g") + " +- " +
        Num(c.sigma_separation_err_nm * 1e3, "%.2g") + " pm" + (c.resolved ? " (resolved)" : " (NOT resolved)"));
    if (c.has_field)
      add("  field " + Num(c.field_gauss, "%.5g") + " +- " + Num(c.field_err_gauss, "%.2g") + " G, vlos " +
          Num(c.vlos_kms, "%.4g") + " +- " + Num(c.vlos_err_kms, "%.2g") + " km/s, chi2_red " +
          Num(c.chi2_reduced, "%.3g"));
  }
  const StokesCharacteristics& h = m.characteristics;
  add("");
  add("characteristics (errors from noise realisations):");
  if (h.has_v) {
    add("  V lobes: blue " + PlusMinus(h.v_blue_amplitude) + ", red " + PlusMinus(h.v_red_amplitude));
    add("  V areas: blue " + PlusMinusPm(h.v_blue_area_nm) + " pm, red " + PlusMinusPm(h.v_red_area_nm) + " pm");
    add("  asymmetry: amplitude " + PlusMinus(h.amplitude_asymmetry, "%.3f") + ", area " +
        PlusMinus(h.area_asymmetry, "%.3f"));
    Measured zc_offset = h.zero_crossing_nm;
    zc_offset.value -= l0;
    add("  zero crossing " + PlusMinusPm(zc_offset, "%+.4f") + " pm from rest = " +
        PlusMinus(h.zero_crossing_vlos_kms, "%.3f") + " km/s");
    add("  V peak separation " + PlusMinusPm(h.v_peak_separation_nm) + " pm, NCP " +
        PlusMinus(h.net_circular_polarisation, "%.4f"));
  } else {
    add("  no Stokes V");
  }
  if (h.has_qu) {
    add("  linear pol. " + PlusMinus(h.linear_polarisation, "%.4f") + " (of line), per Ic " +
        PlusMinusPm(h.linear_polarisation_per_continuum_nm) + " pm");
    add("  angle (integrated) " + PlusMinus(h.linear_polarisation_angle_deg, "%.1f") + " deg, core " +
        PlusMinus(h.linear_polarisation_angle_core_deg, "%.1f") + " deg");
  }
  add("");
  add("field estimates (r = g_eff*dlambda_B/w = " + Num(m.splitting_ratio, "%.3g") + "):");
  for (const MethodEstimate* e : {&m.wfa, &m.cog, &m.split, &m.split_3gauss, &m.me}) {
    std::string row = "  " + e->method + std::string(14 - e->method.size(), ' ');
    if (e->available) {
      if (e->blos_gauss.defined()) row += "B_LOS " + PlusMinus(e->blos_gauss, "%.1f") + " G  ";
      if (e->btrans_gauss.defined()) row += "B_TRANS " + PlusMinus(e->btrans_gauss, "%.1f") + " G  ";
      if (e->field_gauss.defined()) row += "|B| " + PlusMinus(e->field_gauss, "%.1f") + " G  ";
      if (e->azimuth_deg.defined()) row += "azimuth " + PlusMinus(e->azimuth_deg, "%.1f") + " deg  ";
      if (e->vlos_kms.defined()) row += "vlos " + PlusMinus(e->vlos_kms, "%.3f") + " km/s";
    }
    add(row);
    add("      " + e->verdict);
  }
  return t;
}

void WritePng(const std::string& path, const Spectrum1D& s, const SelectedLine& line, const Measurement& m) {
  const ComponentFitResult& c = m.components;
  // Plot the fit window (where the model is defined); the whole spectrum when the fit failed.
  std::size_t first = 0, count = s.size();
  if (c.ok && c.count >= 2) {
    first = c.first;
    count = c.count;
  }
  const Eigen::Index n = static_cast<Eigen::Index>(count);
  Eigen::ArrayXd w(n);
  StokesArray st = StokesArray::Zero(n, 4);
  for (Eigen::Index i = 0; i < n; ++i) {
    const std::size_t k = first + static_cast<std::size_t>(i);
    w[i] = s.wavelength_nm[k];
    st(i, 0) = s.I[k];
    if (s.has_qu()) {
      st(i, 1) = s.Q[k];
      st(i, 2) = s.U[k];
    }
    if (s.has_v()) st(i, 3) = s.V[k];
  }
  StokesPlotOptions p;
  p.centre_nm = m.rest_wavelength_nm;
  const double ic = m.continuum.continuum;
  p.divide_by_continuum = ic > 0.0 && m.sense == LineSense::kAbsorption;
  p.continuum = p.divide_by_continuum ? ic : 1.0;
  p.title = "zeeline measure: " + std::filesystem::path(s.source).filename().string() + "  (" + line.lower_text +
            " - " + line.upper_text + ", " + Num(m.rest_wavelength_nm, "%.4f") + " nm)";
  if (c.ok) {
    PlotCurve model;
    model.y = Eigen::Map<const Eigen::ArrayXd>(c.model.data(), n);
    p.overlays.push_back(model);
    const double colours[][3] = {{0.1, 0.55, 0.1}, {0.55, 0.1, 0.65}, {0.9, 0.5, 0.0}, {0.2, 0.6, 0.7}};
    for (std::size_t g = 0; g < c.parts.size(); ++g) {
      PlotCurve part;
      part.y.resize(n);
      for (Eigen::Index i = 0; i < n; ++i)
        part.y[i] = c.continuum + c.continuum_slope * (w[i] - m.rest_wavelength_nm) + c.parts[g][static_cast<std::size_t>(i)];
      part.r = colours[g % 4][0];
      part.g = colours[g % 4][1];
      part.b = colours[g % 4][2];
      part.dashed = true;
      p.overlays.push_back(part);
    }
    for (const FittedComponent& g : c.components) p.markers_nm.push_back(g.position_nm);
  }
  if (s.has_v() && m.wfa.blos_gauss.defined() && n >= 3) {  // weak-field V model on the V panel
    Eigen::ArrayXd d(n);
    Eigen::ArrayXd I = st.col(0);
    FirstDerivative(w.data(), I.data(), static_cast<std::size_t>(n), d.data());
    PlotCurve v;
    v.panel = 3;
    v.y = -LorentzUnit_nm(m.rest_wavelength_nm, m.wfa.blos_gauss.value) * m.g_eff * d;
    v.dashed = true;
    p.overlays.push_back(v);
  }
  std::vector<std::string> text = Summary(s, line, m);  // wrapped to the column by the picture writer
  text.push_back("");
  text.push_back("red: component model; dashed colours: groups;");
  text.push_back("dashed red on V: weak-field V with B_LOS(wfa)");
  p.annotation = text;
  try {
    WriteStokesPlotPng(path, w, st, p);
  } catch (const PlotError& e) {
    throw OutputError(e.what());
  }
}

// "X,Y" -> two strings; `option` names the option in messages.
std::pair<std::string, std::string> SplitPair(const std::string& text, const std::string& option) {
  const auto comma = text.find(',');
  if (comma == std::string::npos || comma == 0 || comma + 1 == text.size() || text.find(',', comma + 1) != std::string::npos)
    throw OptionError(option + " '" + text + "': expected two values separated by a comma");
  return {text.substr(0, comma), text.substr(comma + 1)};
}

// An angle with an optional unit: arcsec (default, also '"'), arcmin, deg. Returns degrees.
double ParseAngle_deg(const std::string& text, const std::string& option) {
  std::size_t used = 0;
  double v = 0.0;
  try {
    v = std::stod(text, &used);
  } catch (const std::exception&) {
    used = 0;
  }
  const std::string unit = used ? text.substr(used) : "";
  if (used == 0 || !std::isfinite(v)) throw OptionError(option + ": '" + text + "' is not an angle");
  if (unit.empty() || unit == "arcsec" || unit == "\"") return v / 3600.0;
  if (unit == "arcmin" || unit == "'") return v / 60.0;
  if (unit == "deg") return v;
  throw OptionError(option + ": unknown angle unit '" + unit + "' in '" + text + "' (arcsec, arcmin or deg)");
}

// The 0-based pixel named by --pixel X,Y (1-based, like FITS) or --world LON,LAT (the cube's spatial WCS).
std::pair<long, long> CubePixel(const MeasureArgs& a) {
  if (!a.pixel.empty() && !a.world.empty()) throw OptionError("give --pixel or --world, not both");
  if (!a.pixel.empty()) {
    const auto [xs, ys] = SplitPair(a.pixel, "--pixel");
    auto whole = [&](const std::string& t) {
      std::size_t used = 0;
      long v = 0;
      try {
        v = std::stol(t, &used);
      } catch (const std::exception&) {
        used = 0;
      }
      if (used == 0 || used != t.size() || v < 1)
        throw OptionError("--pixel '" + a.pixel + "': '" + t + "' is not a pixel number >= 1 (pixels count from 1)");
      return v;
    };
    return {whole(xs) - 1, whole(ys) - 1};
  }
  const auto [ls, bs] = SplitPair(a.world, "--world");
  const CubeInfo info = ReadCubeInfo(a.spectrum);
  const SpatialWcs wcs(info.spatial_wcs_header);
  if (!wcs.has_world()) throw FitsError(a.spectrum + ": the cube has no spatial WCS; use --pixel X,Y");
  const auto p = wcs.WorldToPixel(ParseAngle_deg(ls, "--world"), ParseAngle_deg(bs, "--world"));
  return {std::lround(p[0]), std::lround(p[1])};
}

Spectrum1D ReadCubePixel(const MeasureArgs& a, const SpectrumReadOptions& ro) {
  const auto [x, y] = CubePixel(a);
  return ReadCubePixelSpectrum(a.spectrum, x, y, ro);
}

bool BareLine(const MeasureArgs& a) {
  return a.line.lower.empty() && a.line.upper.empty() && a.line.line.empty() && !a.line.wavelength.empty();
}

void RunMeasure(const MeasureArgs& a) {
  CheckOutputFile(a.png, a.overwrite, "--png");  // before any work (docs/cli.md, "Outputs")
  CheckOutputFile(a.json_file, a.overwrite, "--json-file");
  const SelectedLine line = MeasureLine(a);

  SpectrumReadOptions ro;
  ro.v_sign = a.v_sign;
  const Spectrum1D s = (a.pixel.empty() && a.world.empty()) ? ReadSpectrum(a.spectrum, ro)
                                                            : ReadCubePixel(a, ro);
  const MeasureRun run = MeasureWithArgs(a, line, s);
  const Measurement& m = run.result;
  const bool lamp = m.sense == LineSense::kEmission;

  if (!a.png.empty())
    WriteOutputAtomically(a.png, a.overwrite, [&](const std::string& tmp) { WritePng(tmp, s, line, m); });
  if (!a.json_file.empty())
    WriteOutputAtomically(a.json_file, a.overwrite, [&](const std::string& tmp) {
      std::ofstream f(tmp);
      if (f) WriteMeasureJson(f, s, line, run);
      if (!f) throw OutputError(a.json_file + ": cannot write");
    });
  if (a.json) {
    WriteMeasureJson(std::cout, s, line, run);
    NoticeMeasureSafety(run);
    return;
  }
  for (const std::string& l : Summary(s, line, m)) std::printf("%s\n", l.c_str());
  if (!a.png.empty()) std::printf("\npicture: %s\n", a.png.c_str());
  if (lamp) std::printf("\n%s\n", kSafetyNote);
}

}  // namespace

SelectedLine MeasureLine(const MeasureArgs& a) {
  if (a.emission && a.absorption) throw OptionError("--emission and --absorption exclude each other");
  // The line: levels (or a catalog entry), or a bare wavelength with --g-eff for free components.
  SelectedLine line;
  if (BareLine(a)) {
    if (!a.g_eff) throw OptionError("give the line's levels (--lower/--upper) or, with --free-components, --g-eff");
    if (a.free_components == 0)
      throw OptionError("without --lower/--upper the Zeeman pattern is unknown: add --free-components N");
    line.rest_wavelength_nm = ParseWavelength_nm(a.line.wavelength);
    line.pattern.g_eff = *a.g_eff;
    line.lower_text = "?";
    line.upper_text = "?";
    if (!a.line.frame.empty()) line.frame = WavelengthFrameFromString(a.line.frame);
    line.description = "(pattern unknown) " + Num(line.rest_wavelength_nm, "%.6f") + " nm, g_eff " + Num(*a.g_eff, "%.4f");
  } else {
    line = ResolveLine(a.line);
    if (a.g_eff) throw OptionError("--g-eff is only for lines given by --wavelength alone (the levels fix g_eff)");
  }
  return line;
}

MeasureRun MeasureWithArgs(const MeasureArgs& a, const SelectedLine& line, const Spectrum1D& s) {
  const bool bare = BareLine(a);
  MeasureOptions o;
  o.rest_wavelength_nm = line.rest_wavelength_nm;
  if (line.frame && s.frame && *line.frame != *s.frame)
    o.rest_wavelength_nm = ConvertWavelength_nm(line.rest_wavelength_nm, *line.frame, *s.frame);
  o.pattern = line.pattern;
  o.free_components = a.free_components;
  if (!a.instrument_fwhm.empty()) o.instrument_fwhm_nm = ParseWavelength_nm(a.instrument_fwhm);
  o.fixed_damping = a.damping;
  o.sense = a.emission ? LineSense::kEmission : a.absorption ? LineSense::kAbsorption : LineSense::kAuto;
  if (!a.window.empty()) o.window_halfwidth_nm = ParseWavelength_nm(a.window);
  o.noise_rel = a.noise;
  o.weak_ratio = a.weak_ratio;
  o.resolution_ratio = a.resolution_ratio;
  o.realisations = a.realisations;
  o.regime = ZeemanRegimeFromString(a.regime.regime);
  if (bare && (!a.regime.lower_energies.empty() || !a.regime.upper_energies.empty() ||
               o.regime == ZeemanRegime::kPaschenBack))
    throw OptionError("the mixed regime needs the line's levels (--lower/--upper), not --g-eff");
  if (!bare) o.mixed_line = ResolveMixedLine(line, a.line, a.regime);
  const std::string bad = o.Validate();
  if (!bad.empty()) throw OptionError(bad);
  return {o, MeasureSpectrum(s, o)};
}

void NoticeMeasureSafety(const MeasureRun& run) {
  if (run.result.sense == LineSense::kEmission) Notice(kSafetyNote);
}

void WriteMeasureJson(std::ostream& out, const Spectrum1D& s, const SelectedLine& line, const MeasureRun& run) {
  WriteJson(out, s, line, run.options, run.result);
}

void AddMeasureOptions(CLI::App* cmd, MeasureArgs& a) {
  cmd->add_option("--pixel", a.pixel, "X,Y: measure this pixel of a Stokes cube (1-based, like FITS)");
  cmd->add_option("--world", a.world,
                  "LON,LAT: measure the cube pixel nearest these world coordinates of its spatial WCS "
                  "(angles in arcsec unless given with arcmin or deg)");
  AddLineSelectionOptions(cmd, a.line, "default: the frame of the spectrum (FITS CTYPE1), tables have none");
  cmd->add_option("--g-eff", a.g_eff, "effective Lande factor for a line given by --wavelength alone (with --free-components)");
  cmd->add_flag("--emission", a.emission, "the line is an emission line (default: detected)");
  cmd->add_flag("--absorption", a.absorption, "the line is an absorption line (default: detected)");
  cmd->add_option("--free-components", a.free_components,
                  "fit N free Voigt components instead of the Zeeman pattern (0 = pattern)")->capture_default_str();
  cmd->add_option("--instrument-fwhm", a.instrument_fwhm, "Gaussian instrument profile FWHM, e.g. 2.5pm (default 0)");
  cmd->add_option("--damping", a.damping, "keep the Voigt damping fixed at this value (Doppler units; default: fitted)");
  cmd->add_option("--window", a.window, "half-width of the line window, e.g. 0.05nm (default: from the line)");
  cmd->add_option("--noise", a.noise, "noise in units of the continuum (default: measured outside the window)");
  cmd->add_option("--weak-ratio", a.weak_ratio, "weak-field regime: r = g_eff*dlambda_B/w below this (w = 1/e half-width of the line), docs/methods.md")->capture_default_str();
  cmd->add_option("--resolution-ratio", a.resolution_ratio,
                  "sigma separation / component FWHM above which the components count as resolved")->capture_default_str();
  cmd->add_option("--realisations", a.realisations, "noise realisations for the characteristics' errors")->capture_default_str();
  AddRegimeOptions(cmd, a.regime);
  cmd->add_option("--v-sign", a.v_sign, "+1, or -1 for data using the IAU 1974 sign of V (docs/conventions.md)")->capture_default_str();
  cmd->add_flag("--json", a.json, "print the results as one JSON object (keys in docs/measure.md)");
  cmd->add_option("--json-file", a.json_file, "also write the JSON object to this file");
  cmd->add_option("--png", a.png, "draw I, Q, U, V with the fitted components and the estimates into this PNG");
  cmd->add_flag("--overwrite", a.overwrite, "replace existing --png / --json-file outputs");
}

void AddMeasureCommand(CLI::App& app) {
  auto a = std::make_shared<MeasureArgs>();
  auto* cmd = app.add_subcommand(
      "measure", "Measure one polarised spectrum: Zeeman components, Stokes characteristics, fields by each method");
  cmd->footer(
      "SPECTRUM is a table (wavelength, I[, Q, U, V]; header like 'wavelength_nm I Q U V') or a FITS file\n"
      "(1-D spectrum with CTYPE1 WAVE/AWAV, I/Q/U/V image extensions, or a 2-D image with a STOKES axis);\n"
      "formats, methods and JSON keys in docs/measure.md. Signs: docs/conventions.md.\n"
      "Examples:\n"
      "  zeeline measure demo_maps/spectra/cd_lamp_1T.txt --lower 1P1 --upper 1D2 --wavelength 643.847nm \\\n"
      "      --instrument-fwhm 2pm --png cd.png\n"
      "  zeeline measure umbra.fits --line FeI_6302 --catalog demo_maps/lines.csv --json\n"
      "  zeeline measure lamp.txt --wavelength 643.847nm --g-eff 1 --free-components 3\n"
      "  zeeline measure demo_maps/bipolar_region.fits --pixel 15,22 --line FeI_6302 --catalog demo_maps/lines.csv");
  cmd->add_option("spectrum", a->spectrum, "spectrum table or FITS file, or a Stokes cube with --pixel/--world")->required();
  AddMeasureOptions(cmd, *a);
  cmd->callback([a] { RunMeasure(*a); });
}

}  // namespace zeeline::cli
