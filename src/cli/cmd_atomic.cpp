// `zeeline lande` and `zeeline line`: Landé factors, effective factors and Zeeman patterns.
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <iostream>
#include <memory>
#include <optional>
#include <string>
#include <utility>
#include <vector>
#include <algorithm>

#include "cli/commands.hpp"
#include "cli/json_writer.hpp"
#include "cli/line_selection.hpp"
#include "cli/output_paths.hpp"
#include "io/pattern_sweep_plot.hpp"
#include "synth/profile_plot.hpp"
#include "zeeline/atomic/lande.hpp"
#include "zeeline/atomic/level.hpp"
#include "zeeline/atomic/line_list.hpp"
#include "zeeline/atomic/paschen_back.hpp"
#include "zeeline/atomic/sigma_group.hpp"
#include "zeeline/atomic/zeeman_pattern.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/core/units.hpp"

namespace zeeline::cli {
namespace {

const char* CouplingName(Coupling c) {
  switch (c) {
    case Coupling::kLS: return "LS";
    case Coupling::kJK: return "jK";
    case Coupling::kJJ: return "jj";
  }
  return "?";
}

LandeOptions MakeLandeOptions(const std::optional<double>& gs) {
  LandeOptions o;
  if (gs) o.g_spin = *gs;
  const std::string problem = o.Validate();
  if (!problem.empty()) throw OptionError("--gs: " + problem);
  return o;
}

// ---------------------------------------------------------------------------- lande
struct LandeArgs {
  std::vector<std::string> levels;
  std::optional<double> gs;
  bool json = false;
};

void RunLande(const LandeArgs& a) {
  const LandeOptions options = MakeLandeOptions(a.gs);
  struct Row {
    Level level;
    double g;
  };
  std::vector<Row> rows;
  for (const auto& text : a.levels) {
    Level lv = ParseLevel(text);
    rows.push_back({lv, LandeG(lv, options)});
  }
  if (a.json) {
    JsonWriter w(std::cout);
    w.BeginArray();
    for (const auto& r : rows) {
      w.BeginObject().Key("level").Value(r.level.text).Key("g").Value(r.g);
      w.Key("J").Value(r.level.J()).Key("coupling").Value(CouplingName(r.level.coupling));
      w.Key("measured").Value(r.level.measured_g.has_value()).EndObject();
    }
    w.EndArray();
    std::cout << "\n";
    return;
  }
  std::printf("%-28s %-8s %6s %12s\n", "level", "coupling", "J", "g");
  for (const auto& r : rows) {
    std::printf("%-28s %-8s %6s %12.6f%s\n", r.level.text.c_str(), CouplingName(r.level.coupling),
                HalfIntegerText(r.level.two_J).c_str(), r.g, r.level.measured_g ? "  (given)" : "");
  }
  std::printf("g_s = %.11f%s\n", options.g_spin, a.gs ? "" : " (CODATA 2018)");
}

// ---------------------------------------------------------------------------- line
struct LineArgs {
  std::string lower, upper, wavelength, field, catalog, line;
  std::string regime = "auto", upper_energies, lower_energies, fields, png;
  std::optional<double> gs;
  bool json = false, overwrite = false;
};

struct LineReport {
  std::string name;  // empty for a single command-line transition
  std::string lower_text, upper_text;
  std::optional<double> wavelength_nm;
  ZeemanPattern pattern;
  RegimePattern regime;  // the regime decision (its pattern is `pattern`)
};

// The regime decision and pattern of one line (mixed-regime errors name the line-list row via the caller).
void ChooseRegime(LineReport& r, const Level& lower, const Level& upper, const LineArgs& a,
                  const LandeOptions& options, const std::optional<double>& field_gauss, const TermEnergies& el,
                  const TermEnergies& eu, bool from_catalog) {
  RegimeOptions ro;
  ro.lower_source = from_catalog ? "column 'lower_term_energies'" : "--lower-term-energies";
  ro.upper_source = from_catalog ? "column 'upper_term_energies'" : "--upper-term-energies";
  ro.regime = ZeemanRegimeFromString(a.regime);
  ro.lande = options;
  ro.field_gauss = field_gauss;
  ro.lower_energies = el;
  ro.upper_energies = eu;
  r.regime = SelectPattern(lower, upper, ro);
  r.pattern = r.regime.pattern;
}

// `--fields FROM:TO[:N]` -> N fields (default 41), evenly spaced.
std::vector<double> ParseFieldRange(const std::string& text) {
  const auto a = text.find(':');
  if (a == std::string::npos) throw OptionError("--fields '" + text + "': expected FROM:TO[:N], e.g. 0T:3T:61");
  const auto b = text.find(':', a + 1);
  const double from = ParseField_gauss(text.substr(0, a));
  const double to = ParseField_gauss(text.substr(a + 1, b == std::string::npos ? std::string::npos : b - a - 1));
  long n = 41;
  if (b != std::string::npos) {
    const std::string count = text.substr(b + 1);
    char* end = nullptr;
    n = std::strtol(count.c_str(), &end, 10);
    if (count.empty() || *end != '\0' || n < 2 || n > 100000)
      throw OptionError("--fields '" + text + "': N = '" + count + "' must be an integer from 2 to 100000");
  }
  if (!(from >= 0.0) || !(to > from))
    throw OptionError("--fields '" + text + "': expected 0 <= FROM < TO");
  std::vector<double> out;
  for (long i = 0; i < n; ++i) out.push_back(from + (to - from) * static_cast<double>(i) / static_cast<double>(n - 1));
  return out;
}

std::string BreakdownText(double gauss) {
  if (std::isnan(gauss)) return "unknown";
  if (std::isinf(gauss)) return "none (linear at every field)";
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.6g G", gauss);
  return buf;
}

void WriteReportJson(JsonWriter& w, const LineReport& r, const std::optional<double>& field_gauss) {
  w.BeginObject();
  if (!r.name.empty()) w.Key("name").Value(r.name);
  w.Key("lower").Value(r.lower_text).Key("upper").Value(r.upper_text);
  w.Key("g_lower").Value(r.pattern.g_lower).Key("g_upper").Value(r.pattern.g_upper);
  w.Key("g_eff").Value(r.pattern.g_eff).Key("G").Value(r.pattern.G);
  w.Key("components").BeginArray();
  for (const auto& c : r.pattern.components) {
    w.BeginObject().Key("Mu").Value(c.M_upper).Key("Ml").Value(c.M_lower).Key("q").Value(c.q);
    w.Key("group").Value(SigmaGroupLabel(c.q));
    w.Key("shift").Value(c.shift_lorentz).Key("strength").Value(c.strength).EndObject();
  }
  w.EndArray();
  w.Key("regime").Value(ToString(r.regime.regime));
  w.Key("linear_breakdown_gauss").Value(r.regime.linear_breakdown_gauss);
  w.Key("regime_note").Value(r.regime.note);
  if (r.wavelength_nm) w.Key("wavelength_nm").Value(*r.wavelength_nm);
  if (field_gauss) w.Key("field_gauss").Value(*field_gauss);
  if (r.wavelength_nm && field_gauss) {
    const double unit_nm = LorentzUnit_nm(*r.wavelength_nm, *field_gauss);
    w.Key("lorentz_shift_nm").Value(unit_nm);
    const bool mixed = r.regime.regime == ZeemanRegime::kPaschenBack;
    w.Key("sigma_shift_nm").Value(unit_nm * (mixed ? SigmaHalfSeparation(r.pattern) : r.pattern.g_eff));
  }
  w.EndObject();
}

void PrintReportText(const LineReport& r, const std::optional<double>& field_gauss) {
  if (!r.name.empty()) std::printf("== %s ==\n", r.name.c_str());
  std::printf("lower %-24s J = %-5s g = %.6f\n", r.lower_text.c_str(),
              HalfIntegerText(r.pattern.two_J_lower).c_str(), r.pattern.g_lower);
  std::printf("upper %-24s J = %-5s g = %.6f\n", r.upper_text.c_str(),
              HalfIntegerText(r.pattern.two_J_upper).c_str(), r.pattern.g_upper);
  const bool mixed = r.regime.regime == ZeemanRegime::kPaschenBack;
  std::printf("g_eff = %.6f   G = %.6f%s   components: %zu\n", r.pattern.g_eff, r.pattern.G,
              mixed ? " (zero-field values)" : "", r.pattern.components.size());
  std::printf("regime: %s -- %s\n", ToString(r.regime.regime).c_str(), r.regime.note.c_str());
  std::printf("linear breakdown field: %s\n", BreakdownText(r.regime.linear_breakdown_gauss).c_str());
  std::optional<double> unit_nm;
  if (r.wavelength_nm && field_gauss) unit_nm = LorentzUnit_nm(*r.wavelength_nm, *field_gauss);
  std::printf("  %-7s %6s %6s %12s %10s", "group", "M_u", "M_l", "shift[L.u.]", "strength");
  if (unit_nm) std::printf(" %14s", "shift[pm]");
  std::printf("\n");
  for (const auto& c : r.pattern.components) {
    const char* group = SigmaGroupLabel(c.q);
    std::printf("  %-7s %6s %6s %12.6f %10.6f", group, HalfIntegerText(static_cast<int>(2 * c.M_upper)).c_str(),
                HalfIntegerText(static_cast<int>(2 * c.M_lower)).c_str(), c.shift_lorentz, c.strength);
    if (unit_nm) std::printf(" %14.6f", c.shift_lorentz * *unit_nm * 1e3);
    std::printf("\n");
  }
  if (unit_nm && !mixed) {  // pm like the table above (docs/cli.md: no pm/nm mix)
    std::printf("at %.6f nm and %.1f G: lorentz_shift %.6f pm, sigma_shift (g_eff x lorentz_shift) %.6f pm\n",
                *r.wavelength_nm, *field_gauss, *unit_nm * 1e3, *unit_nm * r.pattern.g_eff * 1e3);
  } else if (unit_nm) {
    std::printf("at %.6f nm and %.1f G: lorentz_shift %.6f pm, half sigma-centroid separation %.6f x lorentz_shift "
                "= %.6f pm\n",
                *r.wavelength_nm, *field_gauss, *unit_nm * 1e3, SigmaHalfSeparation(r.pattern),
                *unit_nm * SigmaHalfSeparation(r.pattern) * 1e3);
  }
  if (mixed)
    std::printf("caution: fields of a tesla and more come from strong magnets; follow your institution's rules for\n"
                "magnet work (pacemakers, projectiles, quench).\n");
}

// `--fields`: the pattern at each field of the range (same regime rule as a single field), printed and plotted.
void RunFieldSweep(const LineArgs& a, const Level& lower, const Level& upper, const LandeOptions& options,
                   const TermEnergies& el, const TermEnergies& eu, const std::optional<double>& wavelength_nm,
                   bool from_catalog) {
  const std::vector<double> fields = ParseFieldRange(a.fields);
  CheckOutputFile(a.png, a.overwrite, "--png");  // before any work (docs/cli.md, "Outputs")
  RequireParityChange(lower, upper, from_catalog ? "" : "--lower/--upper ");
  std::vector<LineReport> rows;
  for (double b : fields) {
    LineReport r;
    ChooseRegime(r, lower, upper, a, options, b, el, eu, from_catalog);
    rows.push_back(r);
  }
  // position of a component: pm when the wavelength is known, else Lorentz units of 1 T (shift x B[T]).
  auto position = [&](double shift, double b) {
    return wavelength_nm ? shift * LorentzUnit_nm(*wavelength_nm, b) * 1e3 : shift * b * 1e-4;
  };
  const char* unit = wavelength_nm ? "offset[pm]" : "offset[L.u.(1T)]";
  if (a.json) {
    JsonWriter w(std::cout);
    w.BeginObject().Key("lower").Value(lower.text).Key("upper").Value(upper.text);
    w.Key("linear_breakdown_gauss").Value(rows.front().regime.linear_breakdown_gauss);
    if (wavelength_nm) w.Key("wavelength_nm").Value(*wavelength_nm);
    w.Key("sweep").BeginArray();
    for (std::size_t i = 0; i < rows.size(); ++i) {
      w.BeginObject().Key("field_gauss").Value(fields[i]).Key("regime").Value(ToString(rows[i].regime.regime));
      w.Key("components").BeginArray();
      for (const auto& c : rows[i].pattern.components) {
        w.BeginObject().Key("Mu").Value(c.M_upper).Key("Ml").Value(c.M_lower).Key("q").Value(c.q);
        w.Key("group").Value(SigmaGroupLabel(c.q));
        w.Key("shift").Value(c.shift_lorentz).Key("strength").Value(c.strength).EndObject();
      }
      w.EndArray().EndObject();
    }
    w.EndArray().EndObject();
    std::cout << "\n";
  } else {
    std::printf("%s -> %s: %s; linear breakdown field %s\n", lower.text.c_str(), upper.text.c_str(),
                rows.back().regime.note.c_str(), BreakdownText(rows.front().regime.linear_breakdown_gauss).c_str());
    std::printf("%14s %-12s %6s %6s %6s %12s %10s %16s\n", "field[G]", "regime", "M_u", "M_l", "q", "shift[L.u.]",
                "strength", unit);
    for (std::size_t i = 0; i < rows.size(); ++i)
      for (const auto& c : rows[i].pattern.components)
        std::printf("%14.6g %-12s %6s %6s %6d %12.6f %10.6f %16.6f\n", fields[i],
                    ToString(rows[i].regime.regime).c_str(), HalfIntegerText(static_cast<int>(2 * c.M_upper)).c_str(),
                    HalfIntegerText(static_cast<int>(2 * c.M_lower)).c_str(), c.q, c.shift_lorentz, c.strength,
                    position(c.shift_lorentz, fields[i]));
  }
  if (a.png.empty()) return;
  // One curve per (M_u, M_l) label; the linear pattern dashed for reference.
  SweepPlotOptions plot;
  const bool tesla = fields.back() >= 1e4;
  plot.x_label = tesla ? "field [T]" : "field [G]";
  plot.y_label = wavelength_nm ? "component position - line centre [pm] (red > 0)"
                               : "shift x B [Lorentz units of 1 T] (red > 0)";
  plot.title = lower.text + " -> " + upper.text + ": component positions against field";
  std::vector<std::pair<std::pair<double, double>, SweepCurve>> curves;
  for (std::size_t i = 0; i < rows.size(); ++i)
    for (const auto& c : rows[i].pattern.components) {
      auto it = std::find_if(curves.begin(), curves.end(),
                             [&](const auto& e) { return e.first == std::make_pair(c.M_upper, c.M_lower); });
      if (it == curves.end()) {
        curves.push_back({{c.M_upper, c.M_lower}, SweepCurve{}});
        it = std::prev(curves.end());
        it->second.q = c.q;
      }
      it->second.x.push_back(tesla ? fields[i] * 1e-4 : fields[i]);
      it->second.y.push_back(position(c.shift_lorentz, fields[i]));
      it->second.strength.push_back(c.strength);
    }
  for (auto& e : curves) plot.curves.push_back(e.second);
  ZeemanPattern linear = ComputeZeemanPattern(lower, upper, options);
  if (rows.front().regime.line) linear = LinearLimitPattern(*rows.front().regime.line);
  for (const auto& c : linear.components) {
    SweepCurve ref;
    for (std::size_t i = 0; i < fields.size(); ++i) {
      ref.x.push_back(tesla ? fields[i] * 1e-4 : fields[i]);
      ref.y.push_back(position(c.shift_lorentz, fields[i]));
    }
    plot.reference.push_back(ref);
  }
  plot.annotation = {"solid: " + a.regime + " regime (width ~ strength); dashed: linear pattern",
                     "linear breakdown field: " + BreakdownText(rows.front().regime.linear_breakdown_gauss),
                     "blue sigma_b, green pi, red sigma_r"};
  try {
    WriteSweepPlotPng(a.png, plot);
  } catch (const PlotError& e) {
    throw OutputError(e.what());
  }
  std::fprintf(stderr, "wrote %s\n", a.png.c_str());
}

void RunLine(const LineArgs& a) {
  const LandeOptions options = MakeLandeOptions(a.gs);
  ZeemanRegimeFromString(a.regime);  // refuse a bad --regime before any work
  std::optional<double> field_gauss;
  if (!a.field.empty()) field_gauss = ParseFieldStrength_gauss(a.field, "--field");
  if (!a.fields.empty() && field_gauss) throw OptionError("give either --field or --fields, not both");
  if (!a.png.empty() && a.fields.empty()) throw OptionError("--png draws the --fields sweep; give --fields FROM:TO[:N]");
  TermEnergies el, eu;
  if (!a.lower_energies.empty()) el = ParseTermEnergies(a.lower_energies, "--lower-term-energies");
  if (!a.upper_energies.empty()) eu = ParseTermEnergies(a.upper_energies, "--upper-term-energies");
  std::vector<LineReport> reports;
  if (!a.catalog.empty()) {
    if (!a.lower.empty() || !a.upper.empty() || !a.wavelength.empty())
      throw OptionError("--catalog cannot be combined with --lower/--upper/--wavelength");
    if (!el.empty() || !eu.empty())
      throw OptionError("--catalog: the term energies come from the line list (docs/line_list.md), not from options");
    std::vector<LineEntry> entries = ReadLineList(a.catalog);
    if (!a.line.empty()) entries = {FindLine(entries, a.line, a.catalog)};
    if (!a.fields.empty()) {
      if (entries.size() != 1) throw OptionError("--fields with --catalog needs --line NAME");
      const LineEntry& e = entries.front();
      try {
        RunFieldSweep(a, e.lower, e.upper, options, e.lower_term_energies, e.upper_term_energies, e.wavelength_nm,
                      true);
      } catch (const LevelParseError& err) {
        throw LineListError(a.catalog + ":" + std::to_string(e.source_line) + ": " + err.what());
      }
      return;
    }
    for (const auto& e : entries) {
      LineReport r;
      r.name = e.name;
      r.lower_text = e.lower.text;
      r.upper_text = e.upper.text;
      r.wavelength_nm = e.wavelength_nm;
      RequireParityChange(e.lower, e.upper, a.catalog + ":" + std::to_string(e.source_line) + ": ");
      try {
        ChooseRegime(r, e.lower, e.upper, a, options, field_gauss, e.lower_term_energies, e.upper_term_energies,
                     true);
      } catch (const LevelParseError& err) {
        throw LineListError(a.catalog + ":" + std::to_string(e.source_line) + ": " + err.what());
      }
      reports.push_back(r);
    }
  } else {
    if (!a.line.empty()) throw OptionError("--line NAME needs --catalog FILE");
    if (a.lower.empty() || a.upper.empty())
      throw OptionError("give --lower and --upper levels, or --catalog FILE");
    LineReport r;
    const Level lower = ParseLevel(a.lower);
    const Level upper = ParseLevel(a.upper);
    r.lower_text = lower.text;
    r.upper_text = upper.text;
    if (!a.wavelength.empty()) r.wavelength_nm = ParseWavelength_nm(a.wavelength);
    if (!a.fields.empty()) return RunFieldSweep(a, lower, upper, options, el, eu, r.wavelength_nm, false);
    RequireParityChange(lower, upper, "--lower/--upper ");
    ChooseRegime(r, lower, upper, a, options, field_gauss, el, eu, false);
    reports.push_back(r);
  }
  if (a.json) {
    JsonWriter w(std::cout);
    if (a.catalog.empty() || !a.line.empty()) {
      WriteReportJson(w, reports.front(), field_gauss);
    } else {
      w.BeginArray();
      for (const auto& r : reports) WriteReportJson(w, r, field_gauss);
      w.EndArray();
    }
    std::cout << "\n";
    return;
  }
  for (std::size_t i = 0; i < reports.size(); ++i) {
    if (i) std::printf("\n");
    PrintReportText(reports[i], field_gauss);
  }
}

}  // namespace

void AddLandeCommand(CLI::App& app) {
  auto args = std::make_shared<LandeArgs>();
  auto* cmd = app.add_subcommand("lande", "Landé g factor of one or more levels (LS, jK or jj coupling)");
  cmd->footer(
      "Level forms: LS '5D4' '2P3/2' '3Po2'; jK 'jK(2P3/2,p,5/2,2)' (core term, l, K, J);\n"
      "jj 'jj(2P1/2,2S1/2,1)' (term1, term2, J); append ':g=1.503' to use a measured g.\n"
      "Examples:\n"
      "  zeeline lande 5P1 5D0 2P3/2\n"
      "  zeeline lande 'jK(2P3/2,p,5/2,3)' --gs 2 --json");
  cmd->add_option("levels", args->levels, "level designations")->required();
  cmd->add_option("--gs", args->gs, "electron spin g-factor (default CODATA 2.00231930436; 2 = textbook)");
  cmd->add_flag("--json", args->json, "print [{\"level\": ..., \"g\": ...}, ...]");
  cmd->callback([args] { RunLande(*args); });
}

void AddLineCommand(CLI::App& app) {
  auto args = std::make_shared<LineArgs>();
  auto* cmd = app.add_subcommand("line", "Effective Landé factor, G and the full Zeeman pattern of a transition");
  cmd->footer(
      "Shifts are in Lorentz units (g_l M_l - g_u M_u, positive toward the red); strengths sum to 1\n"
      "within each of the sigma_b (q=-1), pi (q=0) and sigma_r (q=+1) groups.\n"
      "Examples:\n"
      "  zeeline line --lower 5P1 --upper 5D0 --wavelength 630.2494nm --field 1000G\n"
      "  zeeline line --lower 1P1 --upper 1D2 --gs 2 --json\n"
      "  zeeline line --catalog demo_maps/lines.csv --field 0.5T\n"
      "  zeeline line --catalog demo_maps/lines.csv --line NeI_6402 --field 0.5T --json\n"
      "  zeeline line --lower 2S1/2 --upper 2Po3/2 --wavelength 670.791nm --field 1T --regime auto \\\n"
      "      --upper-term-energies 1/2=14903.66,3/2=14904.00\n"
      "  zeeline line --lower 2S1/2 --upper 2Po3/2 --upper-term-energies 1/2=14903.66,3/2=14904.00 \\\n"
      "      --fields 0T:3T:61 --png li_sweep.png\n"
      "Beyond the linear regime (--regime paschen-back, or auto at strong fields) the components are labelled by\n"
      "the |J M> they reach as B -> 0 and shifts stay in Lorentz units of the given field.");
  cmd->add_option("--lower", args->lower, "lower level designation");
  cmd->add_option("--upper", args->upper, "upper level designation");
  cmd->add_option("--wavelength", args->wavelength, "rest wavelength with unit, e.g. 630.2494nm or 6302.494A");
  cmd->add_option("--field", args->field, "field strength >= 0 with unit, e.g. 1000G, 1.2kG, 0.1T");
  cmd->add_option("--catalog", args->catalog, "line list file (docs/line_list.md); reports every line");
  cmd->add_option("--line", args->line, "with --catalog: report only this line");
  cmd->add_option("--gs", args->gs, "electron spin g-factor (default CODATA; 2 = textbook)");
  cmd->add_option("--regime", args->regime,
                  "zeeman (linear pattern), paschen-back (mixed regime from term energies) or auto (default: "
                  "mixed when the field exceeds a tenth of the linear breakdown field)");
  cmd->add_option("--upper-term-energies", args->upper_energies,
                  "energies of every J level of the upper LS term in cm^-1, e.g. 1/2=16956.17,3/2=16973.37");
  cmd->add_option("--lower-term-energies", args->lower_energies,
                  "the same for the lower term (a term of a single level may be omitted)");
  cmd->add_option("--fields", args->fields, "field range FROM:TO[:N] (default N 41): component positions against B");
  cmd->add_option("--png", args->png, "with --fields: plot the component positions against B into this PNG");
  cmd->add_flag("--overwrite", args->overwrite, "replace an existing --png file");
  cmd->add_flag("--json", args->json,
                "machine-readable output (keys: g_eff, G, components, regime, linear_breakdown_gauss, "
                "lorentz_shift_nm)");
  cmd->callback([args] { RunLine(*args); });
}

}  // namespace zeeline::cli
