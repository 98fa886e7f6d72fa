// python_reference.hpp -- runs a short /usr/bin/python3 script (numpy, scipy) and returns the numbers it
// prints, one per line: the independent implementation the broadening tests compare with.
#pragma once

#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include <unistd.h>

namespace zeeline::testing {

/// Runs `script` with ZEELINE_PYTHON; returns the printed numbers (empty when python failed).
inline std::vector<double> PythonNumbers(const std::string& script) {
  const std::string path = (std::filesystem::temp_directory_path() /
                            ("zeeline_bro_" + std::to_string(::getpid()) + "_" +
                             std::to_string(std::hash<std::string>{}(script)) + ".py"))
                               .string();
  { std::ofstream(path) << script; }
  std::vector<double> values;
  FILE* pipe = popen((std::string(ZEELINE_PYTHON) + " " + path).c_str(), "r");
  if (pipe) {
    char line[256];
    while (std::fgets(line, sizeof line, pipe)) values.push_back(std::strtod(line, nullptr));
    if (pclose(pipe) != 0) values.clear();
  }
  std::filesystem::remove(path);
  return values;
}

}  // namespace zeeline::testing
