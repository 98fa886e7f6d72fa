#include "cli/json_writer.hpp"

#include <cmath>
#include <cstdio>
#include <cstring>

namespace zeeline::cli {

std::string JsonEscape(const std::string& s) {
  std::string out;
  for (unsigned char c : s) {
    switch (c) {
      case '"': out += "\\\""; break;
      case '\\': out += "\\\\"; break;
      case '\n': out += "\\n"; break;
      case '\t': out += "\\t"; break;
      case '\r': out += "\\r"; break;
      default:
        if (c < 0x20) {
          char buf[8];
          std::snprintf(buf, sizeof buf, "\\u%04x", c);
          out += buf;
        } else {
          out += static_cast<char>(c);
        }
    }
  }
  return out;
}

void JsonWriter::Separate() {
  if (after_key_) {
    after_key_ = false;
    return;
  }
  if (!first_.empty()) {
    if (!first_.back()) out_ << ", ";
    first_.back() = false;
  }
}

JsonWriter& JsonWriter::BeginObject() {
  Separate();
  out_ << '{';
  first_.push_back(true);
  return *this;
}
JsonWriter& JsonWriter::EndObject() {
  out_ << '}';
  first_.pop_back();
  return *this;
}
JsonWriter& JsonWriter::BeginArray() {
  Separate();
  out_ << '[';
  first_.push_back(true);
  return *this;
}
JsonWriter& JsonWriter::EndArray() {
  out_ << ']';
  first_.pop_back();
  return *this;
}
JsonWriter& JsonWriter::Key(const std::string& key) {
  Separate();
  out_ << '"' << JsonEscape(key) << "\": ";
  after_key_ = true;
  return *this;
}
JsonWriter& JsonWriter::Value(double v) {
  Separate();
  if (!std::isfinite(v)) {
    out_ << "null";
  } else {
    char buf[32];
    std::snprintf(buf, sizeof buf, "%.17g", v);
    out_ << buf;
    // A real number stays one for JSON readers that tell 1200 from 1200.0 (Python's json, the module).
    if (std::strpbrk(buf, ".eE") == nullptr) out_ << ".0";
  }
  return *this;
}
JsonWriter& JsonWriter::Value(long long v) {
  Separate();
  out_ << v;
  return *this;
}
JsonWriter& JsonWriter::Value(bool v) {
  Separate();
  out_ << (v ? "true" : "false");
  return *this;
}
JsonWriter& JsonWriter::Value(const std::string& v) {
  Separate();
  out_ << '"' << JsonEscape(v) << '"';
  return *this;
}
JsonWriter& JsonWriter::Null() {
  Separate();
  out_ << "null";
  return *this;
}
JsonWriter& JsonWriter::Array(const std::vector<double>& values) {
  BeginArray();
  for (double v : values) Value(v);
  return EndArray();
}

}  // namespace zeeline::cli
