// Running a tests/tools/ script that writes reference numbers, and reading them back.
#pragma once

#include <gtest/gtest.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <map>
#include <sstream>
#include <string>
#include <vector>

namespace credence::testing {

using Reference = std::map<std::string, std::vector<double>>;

/// Runs tests/tools/`script` DIR with Debian's python (CREDENCE_PYTHON) and reads
/// DIR/reference.txt: one quantity per line, its name then its values (repr, exact round
/// trip). A `sklearn_version` line is printed, not stored.
inline Reference run_python_reference(const std::string& script,
                                      const std::filesystem::path& dir) {
  const std::string command = std::string("'") + CREDENCE_PYTHON + "' '" + CREDENCE_SOURCE_DIR +
                              "/tests/tools/" + script + "' '" + dir.string() + "'";
  EXPECT_EQ(std::system(command.c_str()), 0) << command;
  Reference ref;
  std::ifstream in(dir / "reference.txt");
  std::string line;
  while (std::getline(in, line)) {
    std::istringstream words(line);
    std::string name;
    words >> name;
    if (name == "sklearn_version") {
      std::string version;
      words >> version;
      std::cout << "scikit-learn " << version << '\n';
      continue;
    }
    double v = 0;
    while (words >> v) ref[name].push_back(v);
  }
  return ref;
}

}  // namespace credence::testing
