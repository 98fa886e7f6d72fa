// Shared helpers for the synth tests.
#pragma once

#include <cmath>
#include <cstdio>
#include <string>

#include <gtest/gtest.h>

namespace zeeline::test {

/// |actual - expected| <= rel * |expected| + abs (NaN-aware: two NaNs are equal, one NaN fails).
inline ::testing::AssertionResult IsClose(double actual, double expected, double rel, double abs = 0.0) {
  if (std::isnan(actual) && std::isnan(expected)) return ::testing::AssertionSuccess();
  const double tol = rel * std::fabs(expected) + abs;
  if (std::fabs(actual - expected) <= tol) return ::testing::AssertionSuccess();
  return ::testing::AssertionFailure() << "actual " << actual << " vs expected " << expected << " (diff "
                                       << actual - expected << ", tolerance " << tol << ")";
}
#define EXPECT_CLOSE(actual, expected, rel, abs) EXPECT_TRUE(::zeeline::test::IsClose(actual, expected, rel, abs))

/// Runs a command and returns its standard output (empty on failure to start).
inline std::string RunCommand(const std::string& cmd, int* status = nullptr) {
  std::string out;
  FILE* pipe = popen(cmd.c_str(), "r");
  if (!pipe) return out;
  char buf[65536];
  std::size_t n;
  while ((n = std::fread(buf, 1, sizeof buf, pipe)) > 0) out.append(buf, n);
  const int rc = pclose(pipe);
  if (status) *status = rc;
  return out;
}

}  // namespace zeeline::test
