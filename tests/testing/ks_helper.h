// Runs tests/tools/ks_test.py (scipy.stats.kstest against a normal law) on samples.
#pragma once

#include <cstdio>
#include <fstream>
#include <span>
#include <string>

#include "testing/temp_dir.h"

namespace credence::testing {

struct KsResult {
  double statistic = -1;
  double p_value = -1;  // -1 when the script could not be run
};

/// Writes `samples` to a temporary file and runs scipy's kstest on them.
inline KsResult scipy_ks_normal(std::span<const double> samples, double mean = 0, double sd = 1) {
  TempDir dir;
  const std::string path = (dir.path() / "samples.txt").string();
  {
    std::ofstream out(path);
    out.precision(17);
    for (double x : samples) out << x << '\n';
  }
  const std::string command = std::string(CREDENCE_PYTHON) +
                              " '" CREDENCE_SOURCE_DIR "/tests/tools/ks_test.py' '" + path + "' " +
                              std::to_string(mean) + " " + std::to_string(sd);
  KsResult result;
  FILE* pipe = popen(command.c_str(), "r");
  if (!pipe) return result;
  if (std::fscanf(pipe, "%lf %lf", &result.statistic, &result.p_value) != 2) {
    result = KsResult();
  }
  pclose(pipe);
  return result;
}

}  // namespace credence::testing
