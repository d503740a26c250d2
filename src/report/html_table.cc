// TextTable and its renderings: aligned text, RFC 4180 CSV, JSON and HTML.
#include <fmt/format.h>

#include <algorithm>
#include <charconv>
#include <cmath>

#include "credence/html_report.h"
#include "credence/plot.h"

namespace credence {
namespace {

// Characters, not bytes, so names with accents line up.
std::size_t display_width(std::string_view text) {
  std::size_t n = 0;
  for (const char c : text) n += (static_cast<unsigned char>(c) & 0xC0u) != 0x80u ? 1 : 0;
  return n;
}

const std::string& cell(const TextTable& table, std::size_t row, std::size_t col) {
  static const std::string empty;
  const auto& cells = table.rows[row];
  return col < cells.size() ? cells[col] : empty;
}

bool right_aligned(const TextTable& table, std::size_t col) {
  ColumnAlign align = table.columns[col].align;
  if (align != ColumnAlign::kAuto) return align == ColumnAlign::kRight;
  bool any = false;
  for (std::size_t r = 0; r < table.rows.size(); ++r) {
    const std::string& text = cell(table, r, col);
    if (text.empty()) continue;
    if (!leading_number(text) && text != "-" && text != "NaN" && text != "n/a") {
      return false;
    }
    any = true;
  }
  return any;
}

// Rows holding the best leading number of column `col` (all of them on a tie).
std::vector<bool> best_rows(const TextTable& table, std::size_t col) {
  std::vector<bool> best(table.rows.size(), false);
  BestValue rule = table.columns[col].best;
  if (rule == BestValue::kNone) return best;
  std::vector<double> values(table.rows.size(), std::nan(""));
  double top = std::nan("");
  for (std::size_t r = 0; r < table.rows.size(); ++r) {
    std::optional<double> number = leading_number(cell(table, r, col));
    if (!number) continue;
    double value = *number;
    values[r] = value;
    if (std::isnan(top) || (rule == BestValue::kLowest ? value < top : value > top)) top = value;
  }
  // One number has nothing to be better than: no highlight until two rows compare.
  const auto numbers = std::count_if(values.begin(), values.end(), [](double v) { return !std::isnan(v); });
  if (numbers < 2) return best;
  for (std::size_t r = 0; r < table.rows.size(); ++r) best[r] = values[r] == top;
  return best;
}

}  // namespace

TextTable& TextTable::column(std::string name, ColumnAlign align, BestValue best) {
  columns.push_back({std::move(name), align, best});
  return *this;
}

std::optional<double> leading_number(std::string_view cell) {
  double value = 0;
  std::size_t i = 0;
  while (i < cell.size() && cell[i] == ' ') ++i;
  if (i < cell.size() && cell[i] == '+') ++i;
  auto [end, error] = std::from_chars(cell.data() + i, cell.data() + cell.size(), value);
  if (error != std::errc() || end == cell.data() + i) return std::nullopt;
  // "12abc" is a name, not a number; a number ends at a space, a bracket, '%' or the end.
  if (end != cell.data() + cell.size()) {
    char next = *end;
    if (next != ' ' && next != '%' && next != '(' && next != '[' && next != ',') {
      return std::nullopt;
    }
  }
  if (std::isnan(value)) return std::nullopt;
  return value;
}

std::string render_text(const TextTable& table) {
  const std::size_t columns = table.columns.size();
  std::vector<std::size_t> widths(columns);
  std::vector<bool> right(columns);
  for (std::size_t c = 0; c < columns; ++c) {
    widths[c] = display_width(table.columns[c].name);
    for (std::size_t r = 0; r < table.rows.size(); ++r) {
      widths[c] = std::max(widths[c], display_width(cell(table, r, c)));
    }
    right[c] = right_aligned(table, c);
  }
  auto line = [&](auto cell_text) {
    std::string out;
    for (std::size_t c = 0; c < columns; ++c) {
      std::string_view text = cell_text(c);
      std::string pad(widths[c] - display_width(text), ' ');
      if (c > 0) out += "  ";
      if (right[c]) out += pad;
      out += text;
      if (!right[c] && c + 1 < columns) out += pad;
    }
    while (!out.empty() && out.back() == ' ') out.pop_back();
    return out + "\n";
  };
  std::string out = line([&](std::size_t c) -> std::string_view { return table.columns[c].name; });
  std::vector<std::string> rules(columns);
  for (std::size_t c = 0; c < columns; ++c) rules[c] = std::string(widths[c], '-');
  out += line([&](std::size_t c) -> std::string_view { return rules[c]; });
  for (std::size_t r = 0; r < table.rows.size(); ++r) {
    out += line([&](std::size_t c) -> std::string_view { return cell(table, r, c); });
  }
  return out;
}

std::string render_csv(const TextTable& table) {
  auto field = [](std::string_view text) {
    if (text.find_first_of(",\"\r\n") == std::string_view::npos) return std::string(text);
    std::string out = "\"";
    for (char c : text) {
      if (c == '"') out += '"';
      out += c;
    }
    return out + "\"";
  };
  std::string out;
  for (std::size_t c = 0; c < table.columns.size(); ++c) {
    if (c > 0) out += ',';
    out += field(table.columns[c].name);
  }
  out += "\r\n";
  for (std::size_t r = 0; r < table.rows.size(); ++r) {
    for (std::size_t c = 0; c < table.columns.size(); ++c) {
      if (c > 0) out += ',';
      out += field(cell(table, r, c));
    }
    out += "\r\n";
  }
  return out;
}

std::string render_json(const TextTable& table) {
  auto quoted = [](std::string_view text) {
    std::string out = "\"";
    for (char c : text) {
      unsigned char u = static_cast<unsigned char>(c);
      if (c == '"' || c == '\\') {
        out += '\\';
        out += c;
      } else if (u < 0x20) {
        out += fmt::format("\\u{:04x}", static_cast<unsigned>(u));
      } else {
        out += c;
      }
    }
    return out + "\"";
  };
  auto value = [&](std::string_view text) -> std::string {
    if (text.empty()) return "null";
    double number = 0;
    auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), number);
    if (error == std::errc() && end == text.data() + text.size() && std::isfinite(number)) {
      return fmt::format("{}", number);  // shortest form that reads back the same
    }
    return quoted(text);
  };
  std::string out = "[";
  for (std::size_t r = 0; r < table.rows.size(); ++r) {
    out += r == 0 ? "\n  {" : ",\n  {";
    for (std::size_t c = 0; c < table.columns.size(); ++c) {
      out += fmt::format("{}{}: {}", c == 0 ? "" : ", ", quoted(table.columns[c].name),
                         value(cell(table, r, c)));
    }
    out += "}";
  }
  return out + (table.rows.empty() ? "]\n" : "\n]\n");
}

std::string render_html(const TextTable& table) {
  const std::size_t columns = table.columns.size();
  std::vector<bool> right(columns);
  std::vector<std::vector<bool>> best(columns);
  for (std::size_t c = 0; c < columns; ++c) {
    right[c] = right_aligned(table, c);
    best[c] = best_rows(table, c);
  }
  std::string out = "<div class=\"table-wrap\"><table class=\"data\">\n<thead><tr>";
  for (std::size_t c = 0; c < columns; ++c) {
    out += fmt::format("<th{}>{}</th>", right[c] ? " class=\"num\"" : "",
                       escape_markup(table.columns[c].name));
  }
  out += "</tr></thead>\n<tbody>\n";
  for (std::size_t r = 0; r < table.rows.size(); ++r) {
    out += "<tr>";
    for (std::size_t c = 0; c < columns; ++c) {
      std::string classes = right[c] ? "num" : "";
      if (best[c][r]) classes += classes.empty() ? "best" : " best";
      out += fmt::format("<td{}>{}</td>",
                         classes.empty() ? "" : fmt::format(" class=\"{}\"", classes),
                         escape_markup(cell(table, r, c)));
    }
    out += "</tr>\n";
  }
  out += "</tbody></table></div>\n";
  return out;
}

}  // namespace credence
