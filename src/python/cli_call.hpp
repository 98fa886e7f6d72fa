// cli_call.hpp -- how the Python module runs zeeline's commands: keyword arguments become the command's
// options (`doppler_width='3pm'` -> `--doppler-width=3pm`), the command runs in-process exactly as the
// CLI runs it (same parsing, units, validation, library calls), its --json output becomes Python objects.
#pragma once

#include <string>
#include <vector>

#include <CLI/CLI.hpp>
#include <pybind11/pybind11.h>

namespace zeeline::python {

/// Command-line tokens from keyword arguments: `name=value` -> "--name-with-dashes=value"; True -> a flag;
/// None and False -> nothing; a list or tuple -> the option repeated; a float -> 17 significant digits
/// (exact); an os.PathLike -> its path. Throws pybind11::type_error for other value types.
std::vector<std::string> OptionTokens(const pybind11::kwargs& kwargs);

/// A positional argument (str or os.PathLike) as text.
std::string PathText(const pybind11::handle& value, const char* what);

/// Parses `tokens` (after the program name) with `app`, which runs the command's callback; returns what
/// the command printed on standard output. Called with the GIL held; releases it while the command runs
/// (the capture of std::cout is process-wide, so one command at a time is captured, under a mutex).
std::string RunCapturingStdout(CLI::App& app, const std::vector<std::string>& tokens);

/// Parses `tokens` into the options registered on `app` (its callback, if any, runs too).
void ParseTokens(CLI::App& app, const std::vector<std::string>& tokens);

/// JSON text as Python objects: objects -> dict, lists of numbers (null -> NaN) -> numpy arrays (2-D for
/// a rectangular list of such lists), other lists -> list, null -> None, numbers -> float / int.
pybind11::object JsonToPython(const std::string& json_text);

/// Maps zeeline's exceptions to Python's: bad values, levels, options and data -> ValueError; files that
/// cannot be read or written (FITS, spectrum, line-list, output problems) -> OSError. The message is the
/// one the CLI prints after "zeeline: error: ".
void RegisterExceptionTranslation();

}  // namespace zeeline::python
