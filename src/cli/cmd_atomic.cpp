// `zeeline lande` and `zeeline line`: Landé factors, effective factors and Zeeman patterns.
#include <cstdio>
#include <iostream>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/json_writer.hpp"
#include "zeeline/atomic/lande.hpp"
#include "zeeline/atomic/level.hpp"
#include "zeeline/atomic/line_list.hpp"
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
  std::optional<double> gs;
  bool json = false;
};

struct LineReport {
  std::string name;  // empty for a single command-line transition
  std::string lower_text, upper_text;
  std::optional<double> wavelength_nm;
  ZeemanPattern pattern;
};

void WriteReportJson(JsonWriter& w, const LineReport& r, const std::optional<double>& field_gauss) {
  w.BeginObject();
  if (!r.name.empty()) w.Key("name").Value(r.name);
  w.Key("lower").Value(r.lower_text).Key("upper").Value(r.upper_text);
  w.Key("g_lower").Value(r.pattern.g_lower).Key("g_upper").Value(r.pattern.g_upper);
  w.Key("g_eff").Value(r.pattern.g_eff).Key("G").Value(r.pattern.G);
  w.Key("components").BeginArray();
  for (const auto& c : r.pattern.components) {
    w.BeginObject().Key("Mu").Value(c.M_upper).Key("Ml").Value(c.M_lower).Key("q").Value(c.q);
    w.Key("shift").Value(c.shift_lorentz).Key("strength").Value(c.strength).EndObject();
  }
  w.EndArray();
  if (r.wavelength_nm) w.Key("wavelength_nm").Value(*r.wavelength_nm);
  if (r.wavelength_nm && field_gauss) {
    const double unit_nm = LorentzUnit_nm(*r.wavelength_nm, *field_gauss);
    w.Key("field_gauss").Value(*field_gauss);
    w.Key("lorentz_shift_nm").Value(unit_nm);
    w.Key("sigma_shift_nm").Value(unit_nm * r.pattern.g_eff);
  }
  w.EndObject();
}

void PrintReportText(const LineReport& r, const std::optional<double>& field_gauss) {
  if (!r.name.empty()) std::printf("== %s ==\n", r.name.c_str());
  std::printf("lower %-24s J = %-5s g = %.6f\n", r.lower_text.c_str(),
              HalfIntegerText(r.pattern.two_J_lower).c_str(), r.pattern.g_lower);
  std::printf("upper %-24s J = %-5s g = %.6f\n", r.upper_text.c_str(),
              HalfIntegerText(r.pattern.two_J_upper).c_str(), r.pattern.g_upper);
  std::printf("g_eff = %.6f   G = %.6f   components: %zu\n", r.pattern.g_eff, r.pattern.G,
              r.pattern.components.size());
  std::optional<double> unit_nm;
  if (r.wavelength_nm && field_gauss) unit_nm = LorentzUnit_nm(*r.wavelength_nm, *field_gauss);
  std::printf("  %-6s %6s %6s %12s %10s", "group", "M_u", "M_l", "shift[L.u.]", "strength");
  if (unit_nm) std::printf(" %14s", "shift[pm]");
  std::printf("\n");
  for (const auto& c : r.pattern.components) {
    const char* group = c.q == 0 ? "pi" : (c.q > 0 ? "sig_r" : "sig_b");
    std::printf("  %-6s %6s %6s %12.6f %10.6f", group, HalfIntegerText(static_cast<int>(2 * c.M_upper)).c_str(),
                HalfIntegerText(static_cast<int>(2 * c.M_lower)).c_str(), c.shift_lorentz, c.strength);
    if (unit_nm) std::printf(" %14.6f", c.shift_lorentz * *unit_nm * 1e3);
    std::printf("\n");
  }
  if (unit_nm) {
    std::printf("Lorentz unit at %.6f nm, %.1f G: %.6e nm; sigma centroid shift g_eff x unit = %.6e nm\n",
                *r.wavelength_nm, *field_gauss, *unit_nm, *unit_nm * r.pattern.g_eff);
  }
}

void RunLine(const LineArgs& a) {
  const LandeOptions options = MakeLandeOptions(a.gs);
  std::optional<double> field_gauss;
  if (!a.field.empty()) field_gauss = ParseField_gauss(a.field);
  std::vector<LineReport> reports;
  if (!a.catalog.empty()) {
    if (!a.lower.empty() || !a.upper.empty() || !a.wavelength.empty())
      throw OptionError("--catalog cannot be combined with --lower/--upper/--wavelength");
    std::vector<LineEntry> entries = ReadLineList(a.catalog);
    if (!a.line.empty()) entries = {FindLine(entries, a.line, a.catalog)};
    for (const auto& e : entries) {
      LineReport r;
      r.name = e.name;
      r.lower_text = e.lower.text;
      r.upper_text = e.upper.text;
      r.wavelength_nm = e.wavelength_nm;
      try {
        r.pattern = ComputeZeemanPattern(e.lower, e.upper, options);
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
    r.pattern = ComputeZeemanPattern(lower, upper, options);
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
      "  zeeline line --catalog demo_maps/lines.csv --line NeI_6402 --field 0.5T --json");
  cmd->add_option("--lower", args->lower, "lower level designation");
  cmd->add_option("--upper", args->upper, "upper level designation");
  cmd->add_option("--wavelength", args->wavelength, "rest wavelength with unit, e.g. 630.2494nm or 6302.494A");
  cmd->add_option("--field", args->field, "field strength with unit, e.g. 1000G, 1.2kG, 0.1T");
  cmd->add_option("--catalog", args->catalog, "line list file (docs/line_list.md); reports every line");
  cmd->add_option("--line", args->line, "with --catalog: report only this line");
  cmd->add_option("--gs", args->gs, "electron spin g-factor (default CODATA; 2 = textbook)");
  cmd->add_flag("--json", args->json, "machine-readable output (keys: g_eff, G, components, lorentz_shift_nm)");
  cmd->callback([args] { RunLine(*args); });
}

}  // namespace zeeline::cli
