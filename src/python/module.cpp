// The `zeeline` Python module: the commands of the CLI as functions (docs/python.md).
//
// Each function takes the command's options as keyword arguments (option name with '_' for '-'), values
// as the CLI takes them ('630.2494nm', '1200G') or as plain numbers in the base units (nm, G, km/s), runs
// the command's own code in-process and returns what `--json` prints as dicts of numpy arrays and numbers
// (same keys, same numbers). measure, broadening_diagnose, map and calibrate_crosstalk also take numpy
// arrays. Every function releases the GIL while the command runs.
#include <algorithm>
#include <atomic>
#include <functional>
#include <memory>
#include <optional>
#include <sstream>
#include <string>
#include <vector>

#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>

#include "cli/commands.hpp"
#include "cli/diagnose_command.hpp"
#include "cli/map_command.hpp"
#include "cli/measure_command.hpp"
#include "cli/notices.hpp"
#include "python/array_inputs.hpp"
#include "python/cli_call.hpp"
#include "zeeline/core/errors.hpp"
#include "zeeline/io/cube_reader.hpp"
#include "zeeline/io/field_map_writer.hpp"
#include "zeeline/io/quality_flags.hpp"
#include "zeeline/maps/field_maps.hpp"

namespace py = pybind11;

namespace zeeline::python {
namespace {

using AddCommand = std::function<void(CLI::App&)>;

// The keywords a function fills itself (its result is the JSON object).
void RefuseKeywords(const py::kwargs& kwargs, const std::vector<std::string>& names, const std::string& why) {
  for (const auto& n : names)
    if (kwargs.contains(n)) throw py::value_error(n + ": not available here (" + why + ")");
}

// The cautions a command gave (lab safety) as Python warnings, where notebooks show them.
void Warn(const cli::NoticeCollector& notices) {
  for (const auto& n : notices.notices())
    if (PyErr_WarnEx(PyExc_UserWarning, n.c_str(), 2) != 0) throw py::error_already_set();
}

bool IsPath(const py::handle& v) { return py::isinstance<py::str>(v) || py::hasattr(v, "__fspath__"); }

// Runs `zeeline <command...> --json [options] -- [positionals]` in-process; the JSON as Python objects.
py::object RunJsonCommand(const AddCommand& add, const std::vector<std::string>& command, const py::kwargs& kwargs,
                          const std::vector<std::string>& positionals = {}) {
  RefuseKeywords(kwargs, {"json"}, "the function returns the JSON result");
  CLI::App app{"zeeline"};
  add(app);
  std::vector<std::string> tokens = command;
  tokens.push_back("--json");
  for (auto& t : OptionTokens(kwargs)) tokens.push_back(std::move(t));
  if (!positionals.empty()) {
    tokens.push_back("--");
    for (const auto& p : positionals) tokens.push_back(p);
  }
  cli::NoticeCollector notices;  // lab-safety notes become Python warnings
  const std::string text = RunCapturingStdout(app, tokens);
  Warn(notices);
  return JsonToPython(text);
}

// ---- lande ---------------------------------------------------------------------------------------------
py::object Lande(const py::object& level, const py::object& gs) {
  const bool many = py::isinstance<py::list>(level) || py::isinstance<py::tuple>(level);
  std::vector<std::string> levels;
  auto text = [](const py::handle& l) {
    if (!py::isinstance<py::str>(l)) throw py::type_error("level: expected a str such as '5D4' or '2P3/2'");
    return l.cast<std::string>();
  };
  if (many) {
    for (auto l : level) levels.push_back(text(l));
  } else {
    levels.push_back(text(level));
  }
  py::kwargs kw;
  kw["gs"] = gs;
  const py::list rows = RunJsonCommand(cli::AddLandeCommand, {"lande"}, kw, levels);
  if (!many) return rows[0]["g"];
  py::list out;
  for (auto r : rows) out.append(r["g"]);
  return std::move(out);
}

// ---- measure -------------------------------------------------------------------------------------------
py::object Measure(const py::object& spectrum, const py::object& I, const py::object& Q, const py::object& U,
                   const py::object& V, const py::kwargs& kwargs) {
  if (IsPath(spectrum)) {
    if (!I.is_none() || !Q.is_none() || !U.is_none() || !V.is_none())
      throw py::value_error("measure(FILE, ...): the file holds the Stokes profiles; give either a file or arrays");
    return RunJsonCommand(cli::AddMeasureCommand, {"measure"}, kwargs, {PathText(spectrum, "spectrum")});
  }
  if (I.is_none()) throw py::value_error("measure(wavelength_nm, I, ...): I is required with arrays");
  RefuseKeywords(kwargs, {"json", "json_file", "png", "overwrite", "pixel", "world"},
                 "measure of arrays returns the JSON result; pictures and --pixel need a file");
  cli::MeasureArgs args;
  CLI::App app{"zeeline measure"};
  cli::AddMeasureOptions(&app, args);
  ParseTokens(app, OptionTokens(kwargs));
  const Spectrum1D s = SpectrumFromArrays(spectrum, I, Q, U, V, args.v_sign);
  std::ostringstream json;
  cli::NoticeCollector notices;
  {
    py::gil_scoped_release release;
    const cli::SelectedLine line = cli::MeasureLine(args);
    const cli::MeasureRun run = cli::MeasureWithArgs(args, line, s);
    cli::NoticeMeasureSafety(run);
    cli::WriteMeasureJson(json, s, line, run);
  }
  Warn(notices);
  return JsonToPython(json.str());
}

// ---- broadening diagnose ------------------------------------------------------------------------------
py::object BroadeningDiagnose(const py::object& spectrum, const py::object& I, const py::object& V,
                              const py::kwargs& kwargs) {
  if (IsPath(spectrum)) {
    if (!I.is_none() || !V.is_none())
      throw py::value_error("broadening_diagnose(FILE, ...): the file holds the spectrum; give a file or arrays");
    return RunJsonCommand(cli::AddBroadeningCommand, {"broadening", "diagnose"}, kwargs,
                          {PathText(spectrum, "spectrum")});
  }
  if (I.is_none()) throw py::value_error("broadening_diagnose(wavelength_nm, I, ...): I is required with arrays");
  RefuseKeywords(kwargs, {"json", "png", "overwrite"}, "the diagnosis of arrays returns the JSON result");
  cli::DiagnoseArgs args;
  CLI::App app{"zeeline broadening diagnose"};
  cli::AddDiagnoseOptions(&app, args);
  ParseTokens(app, OptionTokens(kwargs));
  const Spectrum1D s = SpectrumFromArrays(spectrum, I, py::none(), py::none(), V, args.v_sign);
  std::ostringstream json;
  cli::NoticeCollector notices;
  {
    py::gil_scoped_release release;
    cli::DiagnoseToJson(args, s, json);
  }
  Warn(notices);
  return JsonToPython(json.str());
}

// ---- map and calibrate crosstalk of arrays ------------------------------------------------------------
// A problem of the cube read from a TemporaryCubeFile: ValueError naming the array, not the file.
[[noreturn]] void ThrowForArray(const FitsError& e, const std::string& path) {
  std::string message = e.what();
  for (auto at = message.find(path); at != std::string::npos; at = message.find(path))
    message.replace(at, path.size(), "(numpy cube)");
  throw py::value_error(message);
}

WavelengthFrame FrameOf(const py::object& cube_frame, WavelengthFrame otherwise) {
  return cube_frame.is_none() ? otherwise : WavelengthFrameFromString(cube_frame.cast<std::string>());
}

py::object CalibrateCrosstalk(const py::object& cube, const py::object& wavelength_nm, const std::string& stokes,
                              const py::object& cube_frame, const py::kwargs& kwargs) {
  const AddCommand add = cli::AddCalibrateCommand;
  if (IsPath(cube)) {
    if (!wavelength_nm.is_none() || !cube_frame.is_none())
      throw py::value_error("wavelength_nm and cube_frame are for array cubes; a FITS cube carries its own axes");
    return RunJsonCommand(add, {"calibrate", "crosstalk"}, kwargs, {PathText(cube, "cube")});
  }
  const TemporaryCubeFile temporary(cube, wavelength_nm, stokes, FrameOf(cube_frame, WavelengthFrame::kVacuum));
  try {
    py::object result = RunJsonCommand(add, {"calibrate", "crosstalk"}, kwargs, {temporary.path()});
    result["input"] = py::str("(numpy cube)");
    return result;
  } catch (const FitsError& e) {
    ThrowForArray(e, temporary.path());
  }
}

// ---- map -----------------------------------------------------------------------------------------------
// One map of `maps` as a (ny, nx) array of its own type (float32 maps, int16 METHOD and AZIM_PICK, int32
// QUALITY), chosen by the HDU's name (cli::MapHdus).
py::array MapArray(const ImageHdu& h, const FieldMaps& maps) {
  const std::vector<py::ssize_t> shape{static_cast<py::ssize_t>(maps.ny), static_cast<py::ssize_t>(maps.nx)};
  auto copy = [&](const auto& values) {
    py::array_t<typename std::decay_t<decltype(values)>::value_type> array(shape);
    std::copy(values.begin(), values.end(), array.mutable_data());
    return py::array(array);
  };
  for (int s = 0; s < kSlotCount; ++s)
    if (h.extname == MapSlotName(s)) return copy(maps.slots[static_cast<std::size_t>(s)]);
  if (h.extname == map_names::kMethod) return copy(maps.method);
  if (h.extname == map_names::kQuality) return copy(maps.quality);
  return copy(maps.disambiguation);  // AZIM_PICK
}

py::dict Map(const py::object& cube, const py::object& wavelength_nm, const std::string& stokes,
             const py::object& cube_frame, const py::kwargs& kwargs) {
  cli::MapArgs args;
  CLI::App app{"zeeline map"};
  cli::AddMapComputeOptions(&app, args);
  ParseTokens(app, OptionTokens(kwargs));
  const bool from_file = IsPath(cube);
  if (from_file && !wavelength_nm.is_none())
    throw py::value_error("wavelength_nm is for array cubes; a FITS cube carries its own wavelength axis");
  if (from_file && !cube_frame.is_none())
    throw py::value_error("cube_frame is for array cubes; a FITS cube states its frame in CTYPE (WAVE or AWAV)");
  cli::SelectedLine line;
  std::unique_ptr<TemporaryCubeFile> temporary;
  std::string path;
  {
    py::gil_scoped_release release;
    line = cli::ResolveLine(args.line);
  }
  if (from_file) {
    path = PathText(cube, "cube");
  } else {
    // No frame stated: the data are taken to be in the line's frame (no conversion), else vacuum.
    const WavelengthFrame frame = FrameOf(cube_frame, line.frame ? *line.frame : WavelengthFrame::kVacuum);
    temporary = std::make_unique<TemporaryCubeFile>(cube, wavelength_nm, stokes, frame);
    path = temporary->path();
  }

  std::atomic<bool> cancel{false};
  bool interrupted = false;
  FieldMapRunOptions run;
  run.cancel = &cancel;
  run.progress = [&](long, long) {  // between tiles: let Ctrl-C stop the run
    py::gil_scoped_acquire acquire;
    if (PyErr_CheckSignals() != 0) {
      PyErr_Clear();
      interrupted = true;
      cancel = true;
    }
  };
  FieldMaps maps;
  std::vector<ImageHdu> hdus;
  try {
    py::gil_scoped_release release;
    CubeReader reader(path, cli::MapReadOptions(args));
    const cli::MapSetup setup = cli::MapOptionsFromArgs(args, line, reader.info());
    if (ComputeFieldMaps(reader, setup.options, run, maps) == RunStatus::kComplete)
      hdus = cli::MapHdus(maps, setup.options);
  } catch (const FitsError& e) {
    if (from_file) throw;
    ThrowForArray(e, path);
  }
  if (interrupted) {
    PyErr_SetNone(PyExc_KeyboardInterrupt);
    throw py::error_already_set();
  }
  if (!hdus.empty()) {
    const std::string few = cli::FewContinuumNotice(maps, args.noise);
    if (!few.empty() && PyErr_WarnEx(PyExc_UserWarning, few.c_str(), 1) != 0) throw py::error_already_set();
  }
  py::dict out;
  for (const ImageHdu& h : hdus) out[py::str(h.extname)] = MapArray(h, maps);
  return out;
}

py::list QualityNames(std::uint32_t flags) {
  py::list out;
  for (const auto& n : QualityBitNames(flags)) out.append(n);
  return out;
}

// The command's --help text, kept for the docstring.
const char* Doc(const std::string& intro, const AddCommand& add, const std::vector<std::string>& command) {
  CLI::App app{"zeeline"};
  add(app);
  const CLI::App* cmd = &app;
  for (const auto& c : command) cmd = cmd->get_subcommand(c);
  static std::vector<std::unique_ptr<std::string>> kept;
  kept.push_back(std::make_unique<std::string>(
      intro + "\n\nKeyword arguments are the options of `zeeline " + command.front() +
      (command.size() > 1 ? " " + command.back() : "") + "` with '_' for '-' (help of the command follows).\n\n" +
      cmd->help()));
  return kept.back()->c_str();
}

void AddMap(CLI::App& app) {  // only for the help text; the provenance command line is not used
  static char name[] = "zeeline";
  static char* argv[] = {name, nullptr};
  cli::AddMapCommand(app, 1, argv);
}

}  // namespace
}  // namespace zeeline::python

PYBIND11_MODULE(zeeline, m) {
  using namespace zeeline::python;
  namespace cli = zeeline::cli;
  m.doc() =
      "zeeline: magnetic fields from polarised spectra -- the commands of the zeeline CLI as functions "
      "returning what their --json prints (docs/python.md).";
  m.attr("__version__") = ZEELINE_VERSION;
  RegisterExceptionTranslation();

  m.def("lande", &Lande, py::arg("level"), py::arg("gs") = py::none(),
        Doc("lande(level, gs=None) -> float (a list of levels -> list of floats): Landé g of a level "
            "('5D4', '2P3/2', 'jK(2P3/2,p,5/2,2)', 'jj(2P1/2,2S1/2,1)', '5D4:g=1.50').",
            cli::AddLandeCommand, {"lande"}));
  m.def(
      "line", [](const py::kwargs& kw) { return RunJsonCommand(cli::AddLineCommand, {"line"}, kw); },
      Doc("line(lower=, upper=, wavelength=None, field=None, ...) -> dict (a list of dicts for a whole "
          "catalog): g_eff, G, the Zeeman components, the regime -- the keys of `zeeline line --json`.",
          cli::AddLineCommand, {"line"}));
  m.def(
      "profile", [](const py::kwargs& kw) { return RunJsonCommand(cli::AddProfileCommand, {"profile"}, kw); },
      Doc("profile(lower=, upper=, wavelength=, field=, inclination=, azimuth=, vlos=, doppler_width=, damping=, "
          "eta0=, s0=, s1=, ...) -> dict(wavelength_nm, I, Q, U, V, ...): Milne-Eddington Stokes profiles, "
          "identical to `zeeline profile --json`.",
          cli::AddProfileCommand, {"profile"}));
  m.def("measure", &Measure, py::arg("wavelength_nm"), py::arg("I") = py::none(), py::arg("Q") = py::none(),
        py::arg("U") = py::none(), py::arg("V") = py::none(),
        Doc("measure(wavelength_nm, I, Q=None, U=None, V=None, **options) -> dict: one spectrum measured as by "
            "`zeeline measure --json` (the same keys). The first argument may instead be a spectrum file or a "
            "cube with pixel='X,Y'.",
            cli::AddMeasureCommand, {"measure"}));
  m.def("map", &Map, py::arg("cube"), py::arg("wavelength_nm") = py::none(), py::kw_only(), py::arg("stokes") = "IQUV",
        py::arg("cube_frame") = py::none(),
        Doc("map(cube, wavelength_nm=None, stokes='IQUV', cube_frame=None, lower=, upper=, wavelength=, "
            "method='auto', **options) -> dict of 2-D arrays (y, x) named like the map file's extensions "
            "(B_LOS, B_LOS_SIGMA, ..., METHOD, QUALITY). cube: a FITS file name, or an array (Stokes, wavelength, "
            "y, x) with wavelength_nm (uniform grid, nm), its planes named by stokes and its frame by cube_frame "
            "('air'/'vacuum'; default: the line's frame). Releases the GIL; threads as --threads. The output "
            "options of `zeeline map` (-o, --png, --overwrite, --resume, --quiet) do not apply.",
            AddMap, {"map"}));
  m.def(
      "info", [](const py::object& cube, const py::kwargs& kw) {
        return RunJsonCommand(cli::AddInfoCommand, {"info"}, kw, {PathText(cube, "cube")});
      },
      py::arg("cube"),
      Doc("info(cube) -> dict: what the cube reader understood of a FITS cube (`zeeline info --json`).",
          cli::AddInfoCommand, {"info"}));
  m.def(
      "broadening_budget",
      [](const py::kwargs& kw) { return RunJsonCommand(cli::AddBroadeningCommand, {"broadening", "budget"}, kw); },
      Doc("broadening_budget(wavelength=, mass=, temperature=, ...) -> dict: `zeeline broadening budget --json`.",
          cli::AddBroadeningCommand, {"broadening", "budget"}));
  m.def(
      "broadening_inglis_teller",
      [](const py::kwargs& kw) {
        return RunJsonCommand(cli::AddBroadeningCommand, {"broadening", "inglis-teller"}, kw);
      },
      Doc("broadening_inglis_teller(last_resolved=None, density=None, ...) -> dict: "
          "`zeeline broadening inglis-teller --json`.",
          cli::AddBroadeningCommand, {"broadening", "inglis-teller"}));
  m.def("broadening_diagnose", &BroadeningDiagnose, py::arg("spectrum"), py::arg("I") = py::none(),
        py::arg("V") = py::none(),
        Doc("broadening_diagnose(spectrum, I=None, V=None, catalog=, ...) -> dict: is the width magnetic? "
            "`zeeline broadening diagnose --json`. spectrum: a table or FITS file, or the wavelengths in nm "
            "with I (and V) as arrays, held to the rules of measure().",
            cli::AddBroadeningCommand, {"broadening", "diagnose"}));
  m.def(
      "calibrate_modulation",
      [](const py::object& table, const py::kwargs& kw) {
        return RunJsonCommand(cli::AddCalibrateCommand, {"calibrate", "modulation"}, kw, {PathText(table, "table")});
      },
      py::arg("table"),
      Doc("calibrate_modulation(table, ...) -> dict: `zeeline calibrate modulation --json`.",
          cli::AddCalibrateCommand, {"calibrate", "modulation"}));
  m.def("calibrate_crosstalk", &CalibrateCrosstalk, py::arg("cube"), py::arg("wavelength_nm") = py::none(),
        py::kw_only(), py::arg("stokes") = "IQUV", py::arg("cube_frame") = py::none(),
        Doc("calibrate_crosstalk(cube, wavelength_nm=None, stokes='IQUV', cube_frame=None, correct=False, "
            "output=None, ...) -> dict: `zeeline calibrate crosstalk --json`. cube: a FITS file name or an array "
            "(Stokes, wavelength, y, x) with wavelength_nm, as for map() (cube_frame default vacuum); with "
            "correct=True and output= the corrected cube is written as a FITS file.",
            cli::AddCalibrateCommand, {"calibrate", "crosstalk"}));
  m.def(
      "calibrate_magnet",
      [](const py::kwargs& kw) { return RunJsonCommand(cli::AddCalibrateCommand, {"calibrate", "magnet"}, kw); },
      Doc("calibrate_magnet(spectrum=['F:INC,AZ', ...], field=, line=/lower=/upper=/wavelength=, ...) -> dict: "
          "`zeeline calibrate magnet --json`.",
          cli::AddCalibrateCommand, {"calibrate", "magnet"}));
  m.def("quality_names", &QualityNames, py::arg("flags"),
        "quality_names(flags) -> list of str: the names of the QUALITY bits set in a QUALITY value (docs/fits.md).");
}
