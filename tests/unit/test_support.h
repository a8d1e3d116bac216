// Helpers shared by the unit tests.
#pragma once

#include <gtest/gtest.h>

#include <cmath>

namespace planckton::testing {

// |actual - expected| <= rel * |expected|, with both values in the failure message.
inline ::testing::AssertionResult RelativelyNear(double actual, double expected, double rel) {
  const double diff = std::abs(actual - expected);
  if (diff <= rel * std::abs(expected)) return ::testing::AssertionSuccess();
  return ::testing::AssertionFailure() << "actual " << actual << " expected " << expected
                                       << " relative difference " << diff / std::abs(expected) << " > " << rel;
}

}  // namespace planckton::testing
