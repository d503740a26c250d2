// A heat map of one measure over a grid, with diverged and chosen cells marked.
#include "credence/plot_heatmap.h"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>

#include "report/plot_svg.h"

namespace credence {
namespace {

using report::Area;
using report::coord;

// The ramp: a pale warm ground, a light sky blue, then a deep cobalt (the palette's first
// colour, darkened), so the lowest value is light and the highest dark. The middle stop
// keeps the blend blue: straight from the warm ground to cobalt it passes through greys.
constexpr std::array<std::array<double, 3>, 3> kStops = {{{0xf3, 0xed, 0xe0},
                                                         {0x9c, 0xb8, 0xe0},
                                                         {0x1f, 0x3c, 0x86}}};
constexpr std::string_view kNoValueFill = "#ffffff";  // white with a dashed frame
constexpr std::string_view kDivergedInk = "#792603";  // the palette's rust
constexpr std::string_view kDivergedFill = "#f2e4dc";  // a pale rust: the value stays readable
constexpr std::string_view kWhite = "#ffffff";

std::array<double, 3> rgb(const std::string& hex) {
  std::array<double, 3> out{};
  for (int i = 0; i < 3; ++i) {
    out[static_cast<std::size_t>(i)] =
        static_cast<double>(std::stoi(hex.substr(static_cast<std::size_t>(1 + 2 * i), 2), nullptr, 16));
  }
  return out;
}

// WCAG 2.1 relative luminance.
double luminance(const std::string& hex) {
  const std::array<double, 3> c = rgb(hex);
  double l[3];
  for (int i = 0; i < 3; ++i) {
    const double s = c[static_cast<std::size_t>(i)] / 255.0;
    l[i] = s <= 0.04045 ? s / 12.92 : std::pow((s + 0.055) / 1.055, 2.4);
  }
  return 0.2126 * l[0] + 0.7152 * l[1] + 0.0722 * l[2];
}

std::string value_text(double v, int digits) {
  return std::isfinite(v) ? fmt::format("{:.{}g}", v, std::max(1, digits)) : "\xE2\x80\x93";
}

}  // namespace

std::string heat_colour(double t) {
  t = std::isfinite(t) ? std::clamp(t, 0.0, 1.0) : 0.0;
  const std::size_t low = t < 0.5 ? 0 : 1;
  const double u = (t - 0.5 * static_cast<double>(low)) * 2;
  int c[3];
  for (std::size_t i = 0; i < 3; ++i) {
    c[i] = static_cast<int>(std::lround(kStops[low][i] + u * (kStops[low + 1][i] - kStops[low][i])));
  }
  return fmt::format("#{:02x}{:02x}{:02x}", c[0], c[1], c[2]);
}

double contrast_ratio(const std::string& a, const std::string& b) {
  const double la = luminance(a), lb = luminance(b);
  return (std::max(la, lb) + 0.05) / (std::min(la, lb) + 0.05);
}

std::string cell_text_colour(const std::string& fill) {
  // Between the ramp's pale and dark ends lies a band where neither the warm ink nor white
  // reaches 4.5:1; black does there (black or white always reaches 4.58:1 at least).
  const double ink = contrast_ratio(fill, std::string(report::kInk));
  const double white = contrast_ratio(fill, std::string(kWhite));
  if (white >= 4.5 && white >= ink) return std::string(kWhite);
  if (ink >= 4.5) return std::string(report::kInk);
  return white >= contrast_ratio(fill, "#000000") ? std::string(kWhite) : "#000000";
}

std::string render_heat_map(const HeatMapChart& chart) {
  const int width = std::max(chart.frame.width, 200);
  const int height = std::max(chart.frame.height, 160);
  report::SvgDocument doc(width, height, chart.title);
  const std::size_t columns = chart.x_labels.size();
  const std::size_t rows = chart.y_labels.size();
  const auto value_at = [&](std::size_t i) {
    return i < chart.values.size() ? chart.values[i] : std::numeric_limits<double>::quiet_NaN();
  };
  const auto diverged_at = [&](std::size_t i) { return i < chart.diverged.size() && chart.diverged[i]; };

  double lo = std::numeric_limits<double>::infinity(), hi = -lo;
  bool any_diverged = false, any_missing = false;
  for (std::size_t i = 0; i < rows * columns; ++i) {
    const double v = value_at(i);
    if (std::isfinite(v)) lo = std::min(lo, v), hi = std::max(hi, v);
    else if (!diverged_at(i)) any_missing = true;
    any_diverged = any_diverged || diverged_at(i);
  }
  const bool any_value = lo <= hi;

  std::vector<report::LegendEntry> legend;
  if (chart.chosen && *chart.chosen < rows * columns) {
    legend.push_back({"chosen cell (heavy frame)", report::kInk, report::Swatch::kBox, 0});
  }
  if (any_diverged) legend.push_back({"a chain diverged", kDivergedInk, report::Swatch::kCross, 0});
  if (any_missing) legend.push_back({chart.no_value_label + " (\xE2\x80\x93)", kNoValueFill, report::Swatch::kBox, 0});
  const double top = report::draw_header(doc, chart.title, legend, width);

  // Category axes: tick i at the centre of cell i, domain [0, n].
  report::AxisTicks x_ticks, y_ticks;
  for (std::size_t c = 0; c < columns; ++c) {
    x_ticks.values.push_back(static_cast<double>(c) + 0.5);
    x_ticks.labels.push_back(chart.x_labels[c]);
  }
  for (std::size_t r = 0; r < rows; ++r) {
    y_ticks.values.push_back(static_cast<double>(r) + 0.5);
    y_ticks.labels.push_back(chart.y_labels[r]);
  }
  Area area;
  area.top = top + 8;
  area.left = 14 + 18 + report::widest_label(y_ticks) + 10;
  area.right = width - 18;
  area.bottom = height - 44 - 30;  // x ticks and label, then the colour bar
  const report::Scale x{0, static_cast<double>(std::max<std::size_t>(columns, 1)), area.left, area.right, false};
  const report::Scale y{0, static_cast<double>(std::max<std::size_t>(rows, 1)), area.bottom, area.top, false};
  if (rows == 0 || columns == 0) {
    report::draw_x_axis(doc, area, x, x_ticks, chart.x_label, false);
    report::draw_y_axis(doc, area, y, y_ticks, chart.y_label, false, 22);
    report::draw_no_data(doc, area);
    return doc.finish();
  }

  std::string& b = doc.body();
  const double cell_w = area.width() / static_cast<double>(columns);
  const double cell_h = area.height() / static_cast<double>(rows);
  const double text_size = report::kLabelSize;  // the one text scale (plot_svg.h)
  b += "<g class=\"heat-cells\">\n";
  for (std::size_t r = 0; r < rows; ++r) {
    for (std::size_t c = 0; c < columns; ++c) {
      const std::size_t i = r * columns + c;
      const double v = value_at(i);
      const bool finite = std::isfinite(v);
      const double t = finite && hi > lo ? (v - lo) / (hi - lo) : 0;  // all equal: pale
      const std::string fill = diverged_at(i) ? std::string(kDivergedFill)
                               : finite       ? heat_colour(t)
                                              : std::string(kNoValueFill);
      const double x0 = x(static_cast<double>(c)), y0 = y(static_cast<double>(r + 1));
      const bool chosen = chart.chosen == i;
      std::string described = fmt::format("{} {}, {} {}: {}", chart.y_label, chart.y_labels[r],
                                          chart.x_label, chart.x_labels[c],
                                          finite ? value_text(v, chart.digits) : chart.no_value_label);
      if (diverged_at(i)) described += "; a chain diverged";
      if (chosen) described += "; the chosen cell";
      b += fmt::format(
          "<g class=\"heat-cell\" data-cell=\"{}\"{}{}><title>{}</title>\n"
          "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{}\" stroke=\"{}\"{}/>\n",
          i, diverged_at(i) ? " data-diverged=\"1\"" : "", chosen ? " data-chosen=\"1\"" : "",
          escape_markup(described), coord(x0), coord(y0), coord(cell_w), coord(cell_h), fill,
          finite || diverged_at(i) ? report::kGround : report::kMuted,
          finite || diverged_at(i) ? "" : " stroke-dasharray=\"4 3\"");
      const std::string ink = cell_text_colour(fill);
      const double cx = x0 + cell_w / 2, cy = y0 + cell_h / 2;
      if (diverged_at(i)) {
        const double pad = std::min(cell_w, cell_h) * 0.18;
        b += fmt::format(
            "<path d=\"M{} {} L{} {} M{} {} L{} {}\" stroke=\"{}\" stroke-width=\"2\" "
            "stroke-opacity=\"0.75\"/>\n",
            coord(x0 + pad), coord(y0 + pad), coord(x0 + cell_w - pad), coord(y0 + cell_h - pad),
            coord(x0 + pad), coord(y0 + cell_h - pad), coord(x0 + cell_w - pad), coord(y0 + pad),
            kDivergedInk);
        doc.text(cx, cy + text_size + 2, "diverged", "middle", report::kTickSize, kDivergedInk,
                 "font-weight=\"600\"");
      }
      doc.text(cx, cy + text_size / 3, value_text(v, chart.digits), "middle", text_size,
               ink);
      if (chosen) {
        b += fmt::format(
            "<rect class=\"chosen\" x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"none\" "
            "stroke=\"{}\" stroke-width=\"3.5\"/>\n",
            coord(x0 + 2), coord(y0 + 2), coord(cell_w - 4), coord(cell_h - 4), report::kInk);
      }
      b += "</g>\n";
    }
  }
  b += "</g>\n";
  report::draw_x_axis(doc, area, x, x_ticks, chart.x_label, false);
  report::draw_y_axis(doc, area, y, y_ticks, chart.y_label, false, 22);

  // The colour bar: lowest value on the left, highest on the right.
  if (any_value) {
    const double bar_y = height - 22.0, bar_left = area.left, bar_right = area.right;
    constexpr int kSteps = 24;
    const double step_w = (bar_right - bar_left - 120) / kSteps;
    doc.text(bar_left, bar_y + 9, value_text(lo, chart.digits), "start", report::kTickSize, report::kMuted,
             "class=\"bar-low\"");
    const double start = bar_left + 60;
    for (int k = 0; k < kSteps; ++k) {
      b += fmt::format("<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"10\" fill=\"{}\"/>\n",
                       coord(start + k * step_w), coord(bar_y), coord(step_w + 0.5),
                       heat_colour(static_cast<double>(k) / (kSteps - 1)));
    }
    doc.text(bar_right, bar_y + 9, value_text(hi, chart.digits), "end", report::kTickSize, report::kMuted,
             "class=\"bar-high\"");
  }
  return doc.finish();
}

}  // namespace credence
