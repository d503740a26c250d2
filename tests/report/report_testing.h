// Helpers for the report tests: pull attributes out of SVG text and run Python checks.
#pragma once

#include <cstdio>
#include <sys/wait.h>
#include <cmath>
#include <cstdlib>
#include <map>
#include <string>
#include <vector>

#include "testing/temp_dir.h"

namespace credence::testing {

/// Every element `<tag ...>` whose attributes include class="klass", as attribute maps.
/// (Parsed by hand: std::regex recurses per character and overflows on long paths.)
inline std::vector<std::map<std::string, std::string>> svg_elements(const std::string& svg,
                                                                    const std::string& tag,
                                                                    const std::string& klass) {
  std::vector<std::map<std::string, std::string>> found;
  const std::string open = "<" + tag;
  for (std::size_t at = svg.find(open); at != std::string::npos; at = svg.find(open, at + 1)) {
    std::size_t pos = at + open.size();
    if (pos >= svg.size() || (svg[pos] != ' ' && svg[pos] != '>' && svg[pos] != '/')) continue;
    std::map<std::string, std::string> attrs;
    while (pos < svg.size() && svg[pos] != '>') {
      std::size_t eq = svg.find('=', pos);
      std::size_t close = svg.find('>', pos);
      if (eq == std::string::npos || eq > close) break;
      std::size_t name_start = svg.find_last_of(' ', eq) + 1;
      std::size_t value_end = svg.find('"', eq + 2);
      attrs[svg.substr(name_start, eq - name_start)] = svg.substr(eq + 2, value_end - eq - 2);
      pos = value_end + 1;
    }
    if (attrs["class"] == klass) found.push_back(attrs);
  }
  return found;
}

/// The (x, y) pairs of an SVG path made of M and L commands.
inline std::vector<std::pair<double, double>> path_points(const std::string& d) {
  std::vector<std::pair<double, double>> points;
  const char* p = d.c_str();
  while (*p != 0) {
    if (*p == 'M' || *p == 'L') {
      char* end = nullptr;
      double x = std::strtod(p + 1, &end);
      double y = std::strtod(end, &end);
      points.emplace_back(x, y);
      p = end;
    } else {
      ++p;
    }
  }
  return points;
}

inline double number(const std::map<std::string, std::string>& attrs, const std::string& name) {
  auto it = attrs.find(name);
  return it == attrs.end() ? std::nan("") : std::stod(it->second);
}

/// Runs `command` through the shell; returns its exit code and everything it printed.
inline std::pair<int, std::string> run_shell(const std::string& command) {
  std::pair<int, std::string> result{-1, {}};
  FILE* pipe = popen((command + " 2>&1").c_str(), "r");
  if (pipe == nullptr) return result;
  char buffer[4096];
  std::size_t n = 0;
  while ((n = fread(buffer, 1, sizeof buffer, pipe)) > 0) result.second.append(buffer, n);
  int status = pclose(pipe);
  result.first = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  return result;
}

/// Runs CREDENCE_PYTHON on `script` (written to `dir`) with `args`.
inline std::pair<int, std::string> run_python(const TempDir& dir, const std::string& script,
                                              const std::string& args) {
  std::string path = dir.write("check.py", script);
  return run_shell(std::string("'") + CREDENCE_PYTHON + "' '" + path + "' " + args);
}

/// Python (xml.etree.ElementTree, the standard library's XML parser) that parses every
/// file given, checks the root is an SVG element in the SVG namespace, and, with
/// --text FILE, that some element's text equals FILE's contents exactly.
inline const char* kSvgCheckScript = R"py(
import sys, xml.etree.ElementTree as ET
args = sys.argv[1:]
want = None
if args and args[0] == '--text':
    want = open(args[1], encoding='utf-8').read()
    args = args[2:]
for path in args:
    root = ET.parse(path).getroot()
    assert root.tag == '{http://www.w3.org/2000/svg}svg', (path, root.tag)
    if want is not None:
        texts = [e.text for e in root.iter() if e.text]
        assert want in texts, (path, want, texts)
print('ok', len(args))
)py";

}  // namespace credence::testing
