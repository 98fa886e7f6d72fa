// zeeline/core/errors.hpp -- one exception type per area of the library.
//
// Every error carries the offending value (file, HDU, keyword, token, line number) in its message so
// that the CLI can print it unchanged. The library throws; it never prints and never exits.
#pragma once

#include <stdexcept>
#include <string>

namespace zeeline {

/// Bad user-supplied option value (out of range, wrong unit, inconsistent combination).
class OptionError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

/// A physical quantity with a unit could not be parsed ("630.25nm", "1.2kG").
class UnitError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

/// A level designation or transition is malformed or physically impossible.
class LevelParseError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

/// A line-list (catalog) file is malformed; the message names the file and line.
class LineListError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

/// FITS input/output problems; the message names the file, HDU and keyword.
class FitsError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

/// A spectrum or table input is malformed; the message names the file, line and column.
class SpectrumError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

/// A line-broadening analysis cannot use its input (a line without mass, lines of several species, no line
/// in the spectrum); the message names the file, line and what was expected.
class BroadeningError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

/// Polarimeter calibration problems: a malformed calibration table (file, line, column), a sequence that
/// cannot constrain part of the model (naming the part), a fit that failed.
class CalibrationError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

}  // namespace zeeline
