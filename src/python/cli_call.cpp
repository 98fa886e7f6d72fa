#include "python/cli_call.hpp"

#include <cmath>
#include <cstdio>
#include <iostream>
#include <ios>
#include <mutex>
#include <sstream>

#include <pybind11/numpy.h>

#include "cli/commands.hpp"
#include "zeeline/core/errors.hpp"

namespace py = pybind11;

namespace zeeline::python {
namespace {

std::string OptionName(const std::string& key) {
  std::string name = "--" + key;
  for (char& c : name)
    if (c == '_') c = '-';
  return name;
}

// One value as the text the CLI would be given.
std::string ValueText(const py::handle& v, const std::string& option) {
  if (py::isinstance<py::str>(v)) return v.cast<std::string>();
  if (py::isinstance<py::bool_>(v))
    throw py::type_error(option + ": True/False is a flag; give a value of the option instead");
  if (py::isinstance<py::int_>(v) || py::hasattr(v, "__index__")) return py::str(py::int_(v.cast<py::object>()));
  if (py::isinstance<py::float_>(v) || py::hasattr(v, "__float__")) {
    char buf[40];
    std::snprintf(buf, sizeof buf, "%.17g", v.cast<double>());  // round-trips exactly
    return buf;
  }
  if (py::hasattr(v, "__fspath__")) return py::str(v.attr("__fspath__")());
  throw py::type_error(option + ": expected a str, int, float or path, got " +
                       py::str(py::type::handle_of(v).attr("__name__")).cast<std::string>());
}

// Lists of numbers (null -> NaN) become numpy arrays; rectangular lists of those a 2-D array.
py::object Convert(const py::handle& value) {
  if (py::isinstance<py::dict>(value)) {
    py::dict out;
    for (auto item : value.cast<py::dict>()) out[item.first] = Convert(item.second);
    return std::move(out);
  }
  if (!py::isinstance<py::list>(value)) return py::reinterpret_borrow<py::object>(value);
  const py::list list = value.cast<py::list>();
  if (list.empty()) return std::move(list);
  bool numbers = true, any_float = false;
  for (auto e : list) {
    if (e.is_none() || py::isinstance<py::float_>(e)) {
      any_float = true;
    } else if (!py::isinstance<py::int_>(e) || py::isinstance<py::bool_>(e)) {
      numbers = false;
      break;
    }
  }
  if (numbers) {
    if (!any_float) return py::array_t<long long>(list);
    py::array_t<double> a(static_cast<py::ssize_t>(list.size()));
    auto r = a.mutable_unchecked<1>();
    for (py::ssize_t i = 0; i < r.shape(0); ++i) {
      const py::handle e = list[static_cast<std::size_t>(i)];
      r(i) = e.is_none() ? std::nan("") : e.cast<double>();
    }
    return std::move(a);
  }
  py::list converted;
  bool rows = true;
  py::ssize_t width = -1;
  for (auto e : list) {
    py::object c = Convert(e);
    if (!py::isinstance<py::array>(c) || c.cast<py::array>().ndim() != 1 ||
        (width >= 0 && c.cast<py::array>().shape(0) != width))
      rows = false;
    else
      width = c.cast<py::array>().shape(0);
    converted.append(c);
  }
  if (rows) return py::module_::import("numpy").attr("array")(converted);
  return std::move(converted);
}

// Restores std::cout's buffer however the command ends.
class StdoutCapture {
 public:
  StdoutCapture() : saved_(std::cout.rdbuf(buffer_.rdbuf())) {}
  ~StdoutCapture() { std::cout.rdbuf(saved_); }
  StdoutCapture(const StdoutCapture&) = delete;
  StdoutCapture& operator=(const StdoutCapture&) = delete;
  std::string text() const { return buffer_.str(); }

 private:
  std::ostringstream buffer_;
  std::streambuf* saved_;
};

}  // namespace

std::vector<std::string> OptionTokens(const py::kwargs& kwargs) {
  std::vector<std::string> tokens;
  for (auto item : kwargs) {
    const std::string option = OptionName(item.first.cast<std::string>());
    const py::handle v = item.second;
    if (v.is_none()) continue;
    if (py::isinstance<py::bool_>(v)) {
      if (v.cast<bool>()) tokens.push_back(option);
      continue;
    }
    if (py::isinstance<py::list>(v) || py::isinstance<py::tuple>(v)) {
      for (auto e : v) tokens.push_back(option + "=" + ValueText(e, option));
      continue;
    }
    tokens.push_back(option + "=" + ValueText(v, option));
  }
  return tokens;
}

std::string PathText(const py::handle& value, const char* what) {
  if (py::isinstance<py::str>(value)) return value.cast<std::string>();
  if (py::hasattr(value, "__fspath__")) return py::str(value.attr("__fspath__")());
  throw py::type_error(std::string(what) + ": expected a file name (str or os.PathLike)");
}

void ParseTokens(CLI::App& app, const std::vector<std::string>& tokens) {
  std::vector<const char*> argv{"zeeline"};
  for (const auto& t : tokens) argv.push_back(t.c_str());
  try {
    app.parse(static_cast<int>(argv.size()), argv.data());
  } catch (const CLI::ParseError& e) {  // unknown keyword, missing required option, bad number
    throw py::value_error(e.what());
  }
}

std::string RunCapturingStdout(CLI::App& app, const std::vector<std::string>& tokens) {
  py::gil_scoped_release release;  // the command runs without Python objects; other threads may go on
  static std::mutex one_capture_at_a_time;
  const std::lock_guard<std::mutex> lock(one_capture_at_a_time);
  StdoutCapture capture;
  ParseTokens(app, tokens);
  return capture.text();
}

py::object JsonToPython(const std::string& json_text) {
  return Convert(py::module_::import("json").attr("loads")(json_text));
}

void RegisterExceptionTranslation() {
  py::register_exception_translator([](std::exception_ptr p) {
    try {
      if (p) std::rethrow_exception(p);
    } catch (const FitsError& e) {
      PyErr_SetString(PyExc_OSError, e.what());
    } catch (const SpectrumError& e) {
      PyErr_SetString(PyExc_OSError, e.what());
    } catch (const LineListError& e) {
      PyErr_SetString(PyExc_OSError, e.what());
    } catch (const cli::OutputError& e) {
      PyErr_SetString(PyExc_OSError, e.what());
    } catch (const std::ios_base::failure& e) {
      PyErr_SetString(PyExc_OSError, e.what());
    } catch (const CalibrationError& e) {  // an unreadable table is a file problem, the rest bad data
      const bool file = std::string(e.what()).find(": cannot open") != std::string::npos;
      PyErr_SetString(file ? PyExc_OSError : PyExc_ValueError, e.what());
    } catch (const OptionError& e) {
      PyErr_SetString(PyExc_ValueError, e.what());
    } catch (const UnitError& e) {
      PyErr_SetString(PyExc_ValueError, e.what());
    } catch (const LevelParseError& e) {
      PyErr_SetString(PyExc_ValueError, e.what());
    } catch (const BroadeningError& e) {
      PyErr_SetString(PyExc_ValueError, e.what());
    }
  });
}

}  // namespace zeeline::python
