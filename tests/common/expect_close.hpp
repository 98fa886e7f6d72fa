// expect_close.hpp -- the one shared closeness check for the tests: relative, absolute near zero, NaN-aware.
#pragma once

#include <cmath>

#include <gtest/gtest.h>

namespace zeeline::testing {

/// |actual - expected| <= max(rel_tol * |expected|, abs_tol); two NaNs compare equal.
inline ::testing::AssertionResult IsClose(double actual, double expected, double rel_tol, double abs_tol = 0.0) {
  if (std::isnan(actual) && std::isnan(expected)) return ::testing::AssertionSuccess();
  const double diff = std::fabs(actual - expected);
  const double bound = std::max(rel_tol * std::fabs(expected), abs_tol);
  if (diff <= bound) return ::testing::AssertionSuccess();
  return ::testing::AssertionFailure() << "actual " << actual << " vs expected " << expected << ": |diff| " << diff
                                       << " > tolerance " << bound;
}

}  // namespace zeeline::testing

#define EXPECT_CLOSE(actual, expected, rel_tol, ...) \
  EXPECT_TRUE(::zeeline::testing::IsClose((actual), (expected), (rel_tol), ##__VA_ARGS__))
