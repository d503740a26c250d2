// Reading a small CSV written by credence in tests: fields never need quoting there.
#pragma once

#include <fstream>
#include <map>
#include <sstream>
#include <string>
#include <vector>

namespace credence::testing {

/// The comma-separated fields of one line (no quoting).
inline std::vector<std::string> split_line(const std::string& line) {
  std::vector<std::string> out;
  std::stringstream stream(line);
  std::string cell;
  while (std::getline(stream, cell, ',')) out.push_back(cell);
  return out;
}

/// The header's names, and each column's cells as text.
struct CsvColumns {
  std::vector<std::string> names;
  std::map<std::string, std::vector<std::string>> columns;
};

inline CsvColumns read_csv_columns(const std::string& path) {
  CsvColumns csv;
  std::ifstream in(path);
  std::string line;
  std::getline(in, line);
  csv.names = split_line(line);
  while (std::getline(in, line)) {
    const std::vector<std::string> cells = split_line(line);
    for (std::size_t j = 0; j < csv.names.size() && j < cells.size(); ++j) {
      csv.columns[csv.names[j]].push_back(cells[j]);
    }
  }
  return csv;
}

}  // namespace credence::testing
