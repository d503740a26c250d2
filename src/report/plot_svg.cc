// The SVG document, text escaping, the palette and the chart header with its legend.
#include "report/plot_svg.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstdint>

#include "credence/plot.h"

namespace credence {

std::string escape_markup(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  std::size_t i = 0;
  while (i < text.size()) {
    unsigned char c = static_cast<unsigned char>(text[i]);
    if (c < 0x80) {
      switch (c) {
        case '&': out += "&amp;"; break;
        case '<': out += "&lt;"; break;
        case '>': out += "&gt;"; break;
        case '"': out += "&quot;"; break;
        case '\'': out += "&#39;"; break;
        default:
          // XML 1.0 forbids most control characters even as references.
          if (c >= 0x20 || c == '\t' || c == '\n') out += static_cast<char>(c);
          else if (c == '\r') out += ' ';
      }
      ++i;
      continue;
    }
    // A multi-byte UTF-8 sequence: copy it when well-formed (no overlong forms, no
    // surrogates, at most U+10FFFF), else one U+FFFD for the bad lead byte.
    int length = c >= 0xF0 ? 4 : c >= 0xE0 ? 3 : c >= 0xC2 ? 2 : 0;
    bool valid = length > 0 && c <= 0xF4 && i + static_cast<std::size_t>(length) <= text.size();
    std::uint32_t code = length == 2 ? (c & 0x1Fu) : length == 3 ? (c & 0x0Fu) : (c & 0x07u);
    for (int k = 1; valid && k < length; ++k) {
      unsigned char next = static_cast<unsigned char>(text[i + static_cast<std::size_t>(k)]);
      valid = (next & 0xC0u) == 0x80u;
      code = (code << 6) | (next & 0x3Fu);
    }
    if (valid) {
      valid = !(length == 3 && code < 0x800) && !(length == 4 && code < 0x10000) &&
              !(code >= 0xD800 && code <= 0xDFFF) && code <= 0x10FFFF && code != 0xFFFE &&
              code != 0xFFFF;
    }
    if (valid) {
      out.append(text.substr(i, static_cast<std::size_t>(length)));
      i += static_cast<std::size_t>(length);
    } else {
      out += "\xEF\xBF\xBD";
      ++i;
    }
  }
  return out;
}

const std::vector<std::string_view>& plot_palette() {
  // Cobalt, ochre, aubergine, sea grey, rust, then rosewood, indigo and slate teal. Chosen
  // by search (tests/report/palette_test.cc checks it): every one of the first five
  // differs from every other by a CIEDE2000 difference of at least 24 for normal colour
  // vision and under simulated deuteranopia and protanopia, and of at least 14 across all
  // eight; each has a contrast of at least 3:1 against the chart ground (WCAG 2.1,
  // success criterion 1.4.11, non-text contrast).
  static const std::vector<std::string_view> palette = {
      "#3968cd", "#b2772a", "#58384f", "#5c9592", "#792603", "#925454", "#353593", "#3c7485"};
  return palette;
}

namespace report {

double text_width(std::string_view text, double size) {
  double units = 0;
  for (const char byte : text) {
    const auto c = static_cast<unsigned char>(byte);
    if ((c & 0xC0u) == 0x80u) continue;  // continuation byte: counted with its lead
    if (c == ' ' || c == '.' || c == ',' || c == 'i' || c == 'l' || c == '1') units += 0.34;
    else if (c >= 'A' && c <= 'Z') units += 0.68;
    else if (c == 'm' || c == 'w' || c == 'M' || c == 'W') units += 0.85;
    else units += 0.56;
  }
  return units * size;
}

std::string coord(double value) {
  if (std::fabs(value) < 0.005) value = 0;
  return fmt::format("{:.2f}", value);
}

SvgDocument::SvgDocument(int width, int height, std::string_view title)
    : width_(width), height_(height), title_(title) {}

void SvgDocument::text(double x, double y, std::string_view content, std::string_view anchor,
                       double size, std::string_view colour, std::string_view extra) {
  body_ += fmt::format("<text x=\"{}\" y=\"{}\" font-size=\"{}\" fill=\"{}\"", coord(x),
                       coord(y), size, colour);
  if (anchor != "start") body_ += fmt::format(" text-anchor=\"{}\"", anchor);
  if (!extra.empty()) body_ += fmt::format(" {}", extra);
  body_ += fmt::format(">{}</text>\n", escape_markup(content));
}

void SvgDocument::line(double x1, double y1, double x2, double y2, std::string_view colour,
                       double width, std::string_view extra) {
  body_ += fmt::format("<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{}\"", coord(x1),
                       coord(y1), coord(x2), coord(y2), colour);
  if (width != 1) body_ += fmt::format(" stroke-width=\"{}\"", width);
  if (!extra.empty()) body_ += fmt::format(" {}", extra);
  body_ += "/>\n";
}

std::string SvgDocument::finish() const {
  // FNV-1a of the content names the clip path: the same chart gives the same bytes.
  std::uint64_t hash = 1469598103934665603ull;
  for (const char c : body_) hash = (hash ^ static_cast<unsigned char>(c)) * 1099511628211ull;
  for (const char c : title_) hash = (hash ^ static_cast<unsigned char>(c)) * 1099511628211ull;
  std::string id = fmt::format("cr{:012x}", hash & 0xFFFFFFFFFFFFull);
  std::string body = body_;
  for (std::size_t at = body.find("@CLIP@"); at != std::string::npos;
       at = body.find("@CLIP@", at)) {
    body.replace(at, 6, id);
  }
  std::string out = fmt::format(
      "<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 {0} {1}\" width=\"{0}\" "
      "height=\"{1}\" role=\"img\" aria-label=\"{2}\" font-family=\"{3}\">\n"
      "<title>{2}</title>\n<rect class=\"ground\" x=\"0\" y=\"0\" width=\"{0}\" height=\"{1}\" "
      "fill=\"{4}\"/>\n",
      width_, height_, escape_markup(title_), kFontStack, kGround);
  out += body;
  out += "</svg>\n";
  return out;
}

double Scale::operator()(double v) const {
  double t = log ? (std::log10(v) - std::log10(d0)) / (std::log10(d1) - std::log10(d0))
                 : (v - d0) / (d1 - d0);
  return p0 + t * (p1 - p0);
}

std::string_view series_dash(int i) {
  static constexpr std::string_view dashes[] = {"", "", "", "", "6 3", "2 3", "8 3 2 3", "4 4"};
  return dashes[i % 8];
}

std::string_view series_colour(int i) {
  const auto& palette = plot_palette();
  return palette[static_cast<std::size_t>(i) % palette.size()];
}

double draw_header(SvgDocument& doc, std::string_view title,
                   const std::vector<LegendEntry>& legend, int width) {
  double y = 12;
  if (!title.empty()) {
    doc.text(14, 24, title, "start", kTitleSize, kInk, "font-weight=\"600\"");
    y = 34;
  }
  if (legend.empty()) return y + 6;
  // Entries flow left to right and wrap, so long names never run under the plot.
  double x = 14;
  double row = y + 10;
  for (const LegendEntry& entry : legend) {
    double entry_width = 22 + text_width(entry.label, kLabelSize) + 16;
    if (x > 14 && x + entry_width > width - 10) {
      x = 14;
      row += 17;
    }
    std::string& b = doc.body();
    switch (entry.swatch) {
      case Swatch::kLine: {
        std::string_view dash = series_dash(entry.series);
        std::string extra = dash.empty() ? "" : fmt::format("stroke-dasharray=\"{}\"", dash);
        doc.line(x, row, x + 18, row, entry.colour, 2.2, extra);
        break;
      }
      case Swatch::kBox:
        b += fmt::format(
            "<rect x=\"{}\" y=\"{}\" width=\"14\" height=\"10\" fill=\"{}\" fill-opacity=\"0.8\" "
            "stroke=\"{}\"/>\n",
            coord(x + 2), coord(row - 5), entry.colour, entry.colour);
        break;
      case Swatch::kTick:
        doc.line(x + 2, row, x + 16, row, entry.colour, 2);
        break;
      case Swatch::kCross:
        b += fmt::format("<path d=\"M{} {} L{} {} M{} {} L{} {}\" stroke=\"{}\" stroke-width=\"2\"/>\n",
                         coord(x + 5), coord(row - 4), coord(x + 13), coord(row + 4), coord(x + 5),
                         coord(row + 4), coord(x + 13), coord(row - 4), entry.colour);
        break;
    }
    doc.text(x + 22, row + 4, entry.label, "start", kLabelSize, kInk);
    x += entry_width;
  }
  return row + 14;
}

std::string compose_panels(const std::vector<std::string>& panels,
                           const std::vector<std::pair<int, int>>& sizes, std::string_view title,
                           int columns) {
  constexpr int kGap = 12;
  columns = std::max(1, std::min(columns, static_cast<int>(panels.size())));
  int cell_width = 0, cell_height = 0;
  for (const auto& [w, h] : sizes) {
    cell_width = std::max(cell_width, w);
    cell_height = std::max(cell_height, h);
  }
  const int rows = (static_cast<int>(panels.size()) + columns - 1) / columns;
  const int width = std::max(200, columns * cell_width + (columns - 1) * kGap + 2 * kGap);
  SvgDocument probe(width, 0, title);
  const double top = std::ceil(draw_header(probe, title, {}, width));
  const int height = static_cast<int>(top) + rows * (cell_height + kGap);
  SvgDocument doc(width, height, title);
  draw_header(doc, title, {}, width);
  for (std::size_t i = 0; i < panels.size(); ++i) {
    const int column = static_cast<int>(i) % columns;
    const int row = static_cast<int>(i) / columns;
    std::string panel = panels[i];
    // Each panel is a nested <svg> placed by its x and y; it inherits the namespace, so
    // the page that inlines the whole keeps a single URL-like attribute to drop.
    constexpr std::string_view kNamespace = " xmlns=\"http://www.w3.org/2000/svg\"";
    if (const std::size_t at = panel.find(kNamespace); at < panel.find('>')) {
      panel.erase(at, kNamespace.size());
    }
    if (panel.rfind("<svg ", 0) == 0) {
      panel.insert(5, fmt::format("class=\"panel\" data-panel=\"{}\" x=\"{}\" y=\"{}\" ", i,
                                  kGap + column * (cell_width + kGap),
                                  static_cast<int>(top) + row * (cell_height + kGap)));
    }
    doc.body() += panel;
  }
  return doc.finish();
}

void draw_no_data(SvgDocument& doc, const Area& area) {
  doc.text((area.left + area.right) / 2, (area.top + area.bottom) / 2, "no data", "middle", kTitleSize,
           kMuted, "class=\"no-data\" font-style=\"italic\"");
}

}  // namespace report
}  // namespace credence
