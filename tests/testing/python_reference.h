// Running a tests/tools/ script that writes reference numbers, and reading them back.
#pragma once

#include <gtest/gtest.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <iterator>
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

/// One number from the HDF5 file `run`, read with h5py under Debian's python
/// (CREDENCE_PYTHON): `expression` is Python over `f` (the file, opened read-only) and
/// `numpy`, and must not hold a double quote. Its output goes to `scratch`. Returns -1,
/// with a test failure naming python's output, when python fails.
inline double h5py_number(const std::string& run, const std::string& expression,
                          const std::filesystem::path& scratch) {
  const std::string command = std::string("'") + CREDENCE_PYTHON +
                              "' -c \"import h5py, numpy, sys; f = h5py.File(sys.argv[1], 'r'); "
                              "print(repr(float(" + expression + ")))\" '" + run + "' > '" +
                              scratch.string() + "' 2>&1";
  const int code = std::system(command.c_str());
  std::ifstream in(scratch);
  const std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  if (code != 0) {
    ADD_FAILURE() << command << "\n" << text;
    return -1;
  }
  return std::strtod(text.c_str(), nullptr);
}

}  // namespace credence::testing
