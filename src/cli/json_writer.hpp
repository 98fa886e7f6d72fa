// json_writer.hpp (CLI-private) -- a tiny streaming JSON writer for the --json outputs.
// Numbers are written with 17 significant digits (round-trip exact), a real number always with a decimal
// point or exponent (1200.0, not 1200; integers come from Value(long long)); NaN and infinities become null.
#pragma once

#include <ostream>
#include <string>
#include <vector>

namespace zeeline::cli {

class JsonWriter {
 public:
  explicit JsonWriter(std::ostream& out) : out_(out) {}
  JsonWriter& BeginObject();
  JsonWriter& EndObject();
  JsonWriter& BeginArray();
  JsonWriter& EndArray();
  JsonWriter& Key(const std::string& key);
  JsonWriter& Value(double v);
  JsonWriter& Value(long long v);
  JsonWriter& Value(int v) { return Value(static_cast<long long>(v)); }
  JsonWriter& Value(bool v);
  JsonWriter& Value(const std::string& v);
  JsonWriter& Value(const char* v) { return Value(std::string(v)); }
  JsonWriter& Null();
  JsonWriter& Array(const std::vector<double>& values);

 private:
  void Separate();
  std::ostream& out_;
  std::vector<bool> first_;  // per open container: nothing written yet
  bool after_key_ = false;
};

std::string JsonEscape(const std::string& s);

}  // namespace zeeline::cli
