// Axis ticks (1-2-5 steps, decades), their labels, and drawing the axes of a chart.
#include <fmt/format.h>

#include <algorithm>
#include <cassert>
#include <cmath>

#include "credence/plot.h"
#include "report/plot_svg.h"

namespace credence {

std::vector<double> nice_ticks(double lo, double hi, int target) {
  assert(std::isfinite(lo) && std::isfinite(hi) && lo < hi && target >= 2);
  double raw = (hi - lo) / target;
  double magnitude = std::pow(10.0, std::floor(std::log10(raw)));
  double norm = raw / magnitude;
  double step = (norm < 1.5 ? 1 : norm < 3 ? 2 : norm < 7 ? 5 : 10) * magnitude;
  // Integer multiples of the step, so 0.1 * 3 prints as 0.3 and zero is exactly zero.
  double first = std::floor(lo / step + 1e-9);
  double last = std::ceil(hi / step - 1e-9);
  std::vector<double> ticks;
  for (double k = first; k <= last + 0.5; k += 1) {
    double value = k * step;
    if (std::fabs(value) < step * 1e-9) value = 0;
    ticks.push_back(value);
  }
  return ticks;
}

std::vector<double> log_ticks(double lo, double hi) {
  assert(0 < lo && lo < hi && std::isfinite(hi));
  int d0 = static_cast<int>(std::floor(std::log10(lo) + 1e-9));
  int d1 = static_cast<int>(std::ceil(std::log10(hi) - 1e-9));
  if (d1 == d0) d1 = d0 + 1;
  std::vector<double> ticks;
  if (d1 - d0 >= 2) {
    int every = (d1 - d0 + 7) / 8;  // at most about eight labelled decades
    while ((d1 - d0) % every != 0) ++d1;
    for (int d = d0; d <= d1; d += every) ticks.push_back(std::pow(10.0, d));
    return ticks;
  }
  // Within about one decade: 1, 2, 5 times each power of ten, from the last one <= lo to
  // the first one >= hi.
  for (int d = d0; d <= d1; ++d) {
    for (double m : {1.0, 2.0, 5.0}) {
      double value = m * std::pow(10.0, d);
      if (d == d1 && m > 1) break;
      ticks.push_back(value);
    }
  }
  auto begin = std::upper_bound(ticks.begin(), ticks.end(), lo * (1 + 1e-9));
  if (begin != ticks.begin()) --begin;
  auto end = std::lower_bound(ticks.begin(), ticks.end(), hi * (1 - 1e-9));
  if (end != ticks.end()) ++end;
  return std::vector<double>(begin, end);
}

std::string tick_label(double value, double step) {
  double magnitude = std::fabs(value);
  int decimals = std::max(0, static_cast<int>(std::ceil(-std::log10(std::fabs(step)) - 1e-9)));
  if (magnitude < std::fabs(step) * 1e-9) value = 0;  // no "-0.0"
  if (value != 0 && (magnitude >= 1e6 || decimals > 4)) {
    // Short scientific form: "1e-06", "2.5e+07".
    return fmt::format("{:.3g}", value);
  }
  if (value == 0 && decimals > 4) return "0";
  return fmt::format("{:.{}f}", value, decimals);
}

namespace report {
namespace {

// Ticks strictly inside or on [lo, hi] (fixed bounds need not be ticks themselves).
std::vector<double> inside(const std::vector<double>& ticks, double lo, double hi) {
  std::vector<double> kept;
  double slack = (hi - lo) * 1e-9;
  for (double t : ticks) {
    if (t >= lo - slack && t <= hi + slack) kept.push_back(t);
  }
  return kept;
}

}  // namespace

AxisTicks linear_axis(double lo, double hi, double fixed_lo, double fixed_hi, int target) {
  if (!std::isnan(fixed_lo)) lo = fixed_lo;
  if (!std::isnan(fixed_hi)) hi = fixed_hi;
  if (!(lo < hi)) {
    // One distinct value (or none): open a window around it.
    double pad = lo == 0 || !std::isfinite(lo) ? 1.0 : std::fabs(lo) * 0.1;
    if (!std::isfinite(lo)) lo = 0;
    hi = lo + pad;
    lo = lo - pad;
  }
  AxisTicks axis;
  std::vector<double> ticks = nice_ticks(lo, hi, target);
  axis.lo = std::isnan(fixed_lo) ? ticks.front() : lo;
  axis.hi = std::isnan(fixed_hi) ? ticks.back() : hi;
  axis.values = inside(ticks, axis.lo, axis.hi);
  double step = ticks.size() > 1 ? ticks[1] - ticks[0] : hi - lo;
  for (double t : axis.values) axis.labels.push_back(tick_label(t, step));
  return axis;
}

AxisTicks log_axis(double lo, double hi, double fixed_lo, double fixed_hi) {
  if (!std::isnan(fixed_lo) && fixed_lo > 0) lo = fixed_lo;
  if (!std::isnan(fixed_hi) && fixed_hi > 0) hi = fixed_hi;
  if (!(lo > 0) || !std::isfinite(lo)) lo = 1;
  if (!(hi > lo) || !std::isfinite(hi)) {
    double centre = lo;
    lo = centre / 2;
    hi = centre * 2;
  }
  AxisTicks axis;
  std::vector<double> ticks = log_ticks(lo, hi);
  axis.lo = std::isnan(fixed_lo) ? ticks.front() : lo;
  axis.hi = std::isnan(fixed_hi) ? ticks.back() : hi;
  axis.values = inside(ticks, axis.lo, axis.hi);
  for (double t : axis.values) axis.labels.push_back(tick_label(t, t));
  return axis;
}

double widest_label(const AxisTicks& ticks) {
  double widest = 0;
  for (const std::string& label : ticks.labels) widest = std::max(widest, text_width(label, kTickSize));
  return widest;
}

void draw_x_axis(SvgDocument& doc, const Area& area, const Scale& x, const AxisTicks& ticks,
                 std::string_view label, bool grid) {
  for (std::size_t i = 0; i < ticks.values.size(); ++i) {
    double px = x(ticks.values[i]);
    if (grid) doc.line(px, area.top, px, area.bottom, kGrid);
    doc.line(px, area.bottom, px, area.bottom + 4, kAxis);
    doc.text(px, area.bottom + 16, ticks.labels[i], "middle", kTickSize, kMuted, "class=\"xtick\"");
  }
  doc.line(area.left, area.bottom, area.right, area.bottom, kAxis);
  if (!label.empty()) {
    doc.text((area.left + area.right) / 2, area.bottom + 34, label, "middle", kLabelSize, kInk,
             "class=\"xlabel\"");
  }
}

void draw_y_axis(SvgDocument& doc, const Area& area, const Scale& y, const AxisTicks& ticks,
                 std::string_view label, bool grid, double label_x) {
  for (std::size_t i = 0; i < ticks.values.size(); ++i) {
    double py = y(ticks.values[i]);
    if (grid) doc.line(area.left, py, area.right, py, kGrid);
    doc.line(area.left - 4, py, area.left, py, kAxis);
    doc.text(area.left - 7, py + 3.5, ticks.labels[i], "end", kTickSize, kMuted, "class=\"ytick\"");
  }
  doc.line(area.left, area.top, area.left, area.bottom, kAxis);
  if (!label.empty()) {
    double cy = (area.top + area.bottom) / 2;
    doc.text(label_x, cy, label, "middle", kLabelSize, kInk,
             fmt::format("class=\"ylabel\" transform=\"rotate(-90 {} {})\"", coord(label_x),
                         coord(cy)));
  }
}

}  // namespace report
}  // namespace credence
