// The chart palette (issue 19, item 4): five methods stay distinct for normal colour vision
// and for readers with red-green colour blindness, and every colour stands out from the
// chart ground.
//
// Colour difference: CIEDE2000, as written up in "The CIEDE2000 color-difference formula:
// Implementation notes, supplementary test data, and mathematical observations" (Color
// Research & Application, 2005), whose test pairs check the implementation below.
// Colour blindness: the full-severity protanopia and deuteranopia matrices of "A
// Physiologically-based Model for Simulation of Color Vision Deficiency" (IEEE
// Transactions on Visualization and Computer Graphics, 2009), applied to linear RGB
// (matrix values from memory, to six decimals as usually reproduced).
// Contrast: WCAG 2.1 relative luminance and contrast ratio; success criterion 1.4.11 asks
// 3:1 for graphical objects.
#include <gtest/gtest.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <numbers>
#include <string>

#include "credence/plot.h"

namespace credence {
namespace {

using Rgb = std::array<double, 3>;
using Lab = std::array<double, 3>;
using Matrix = std::array<std::array<double, 3>, 3>;

Rgb from_hex(std::string_view hex) {
  Rgb rgb{};
  for (int k = 0; k < 3; ++k) {
    rgb[static_cast<std::size_t>(k)] =
        std::stoi(std::string(hex.substr(1 + 2 * static_cast<std::size_t>(k), 2)), nullptr, 16) /
        255.0;
  }
  return rgb;
}

// sRGB transfer function (IEC 61966-2-1), both ways.
double to_linear(double c) { return c <= 0.04045 ? c / 12.92 : std::pow((c + 0.055) / 1.055, 2.4); }
double to_gamma(double c) {
  c = std::clamp(c, 0.0, 1.0);
  return c <= 0.0031308 ? 12.92 * c : 1.055 * std::pow(c, 1 / 2.4) - 0.055;
}

Rgb simulate(const Rgb& rgb, const Matrix& m) {
  Rgb linear{to_linear(rgb[0]), to_linear(rgb[1]), to_linear(rgb[2])};
  Rgb out{};
  for (std::size_t i = 0; i < 3; ++i) {
    double v = 0;
    for (std::size_t j = 0; j < 3; ++j) v += m[i][j] * linear[j];
    out[i] = to_gamma(v);
  }
  return out;
}

// sRGB -> CIE XYZ (D65) -> CIELAB.
Lab to_lab(const Rgb& rgb) {
  const double r = to_linear(rgb[0]), g = to_linear(rgb[1]), b = to_linear(rgb[2]);
  const double xyz[3] = {(0.4124564 * r + 0.3575761 * g + 0.1804375 * b) / 0.95047,
                         (0.2126729 * r + 0.7151522 * g + 0.0721750 * b) / 1.0,
                         (0.0193339 * r + 0.1191920 * g + 0.9503041 * b) / 1.08883};
  double f[3];
  for (int k = 0; k < 3; ++k) {
    const double t = xyz[k];
    f[k] = t > std::pow(6.0 / 29, 3) ? std::cbrt(t) : t / (3 * std::pow(6.0 / 29, 2)) + 4.0 / 29;
  }
  return {116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])};
}

double degrees(double radians) { return radians * 180 / std::numbers::pi; }
double radians(double degrees) { return degrees * std::numbers::pi / 180; }

double ciede2000(const Lab& one, const Lab& two) {
  const double c1 = std::hypot(one[1], one[2]), c2 = std::hypot(two[1], two[2]);
  const double c_mean7 = std::pow((c1 + c2) / 2, 7);
  const double g = 0.5 * (1 - std::sqrt(c_mean7 / (c_mean7 + std::pow(25.0, 7))));
  const double a1 = (1 + g) * one[1], a2 = (1 + g) * two[1];
  const double cp1 = std::hypot(a1, one[2]), cp2 = std::hypot(a2, two[2]);
  const auto hue = [](double b, double a) {
    if (a == 0 && b == 0) return 0.0;
    const double h = degrees(std::atan2(b, a));
    return h < 0 ? h + 360 : h;
  };
  const double h1 = hue(one[2], a1), h2 = hue(two[2], a2);
  const double dl = two[0] - one[0];
  const double dc = cp2 - cp1;
  double dh = 0;
  if (cp1 * cp2 != 0) {
    dh = h2 - h1;
    if (dh > 180) dh -= 360;
    if (dh < -180) dh += 360;
  }
  const double d_big_h = 2 * std::sqrt(cp1 * cp2) * std::sin(radians(dh / 2));
  const double l_mean = (one[0] + two[0]) / 2;
  const double cp_mean = (cp1 + cp2) / 2;
  double h_mean = h1 + h2;
  if (cp1 * cp2 != 0) {
    if (std::fabs(h1 - h2) <= 180) h_mean = (h1 + h2) / 2;
    else if (h1 + h2 < 360) h_mean = (h1 + h2 + 360) / 2;
    else h_mean = (h1 + h2 - 360) / 2;
  }
  const double t = 1 - 0.17 * std::cos(radians(h_mean - 30)) + 0.24 * std::cos(radians(2 * h_mean)) +
                   0.32 * std::cos(radians(3 * h_mean + 6)) - 0.20 * std::cos(radians(4 * h_mean - 63));
  const double d_theta = 30 * std::exp(-std::pow((h_mean - 275) / 25, 2));
  const double cp_mean7 = std::pow(cp_mean, 7);
  const double rc = 2 * std::sqrt(cp_mean7 / (cp_mean7 + std::pow(25.0, 7)));
  const double sl = 1 + 0.015 * std::pow(l_mean - 50, 2) / std::sqrt(20 + std::pow(l_mean - 50, 2));
  const double sc = 1 + 0.045 * cp_mean;
  const double sh = 1 + 0.015 * cp_mean * t;
  const double rt = -std::sin(radians(2 * d_theta)) * rc;
  return std::sqrt(std::pow(dl / sl, 2) + std::pow(dc / sc, 2) + std::pow(d_big_h / sh, 2) +
                   rt * (dc / sc) * (d_big_h / sh));
}

double relative_luminance(const Rgb& rgb) {
  return 0.2126 * to_linear(rgb[0]) + 0.7152 * to_linear(rgb[1]) + 0.0722 * to_linear(rgb[2]);
}

constexpr Matrix kIdentity = {{{1, 0, 0}, {0, 1, 0}, {0, 0, 1}}};
constexpr Matrix kProtanopia = {{{0.152286, 1.052583, -0.204868},
                                 {0.114503, 0.786281, 0.099216},
                                 {-0.003882, -0.048116, 1.051998}}};
constexpr Matrix kDeuteranopia = {{{0.367322, 0.860646, -0.227968},
                                   {0.280085, 0.672501, 0.047413},
                                   {-0.011820, 0.042940, 0.968881}}};

TEST(Palette, Ciede2000MatchesThePublishedTestPairs) {
  // Pairs 1-3 of the 2005 paper's supplementary test data.
  EXPECT_NEAR(ciede2000({50, 2.6772, -79.7751}, {50, 0, -82.7485}), 2.0425, 5e-5);
  EXPECT_NEAR(ciede2000({50, 3.1571, -77.2803}, {50, 0, -82.7485}), 2.8615, 5e-5);
  EXPECT_NEAR(ciede2000({50, 2.8361, -74.0200}, {50, 0, -82.7485}), 3.4412, 5e-5);
}

// Smallest CIEDE2000 difference between any two of the first `count` palette colours,
// seen through `vision`.
double closest_pair(std::size_t count, const Matrix& vision) {
  const auto& palette = plot_palette();
  double closest = 1e9;
  for (std::size_t i = 0; i < count; ++i) {
    for (std::size_t j = i + 1; j < count; ++j) {
      const Lab a = to_lab(simulate(from_hex(palette[i]), vision));
      const Lab b = to_lab(simulate(from_hex(palette[j]), vision));
      closest = std::min(closest, ciede2000(a, b));
    }
  }
  return closest;
}

TEST(Palette, FiveMethodsStayDistinctWithAndWithoutRedGreenColourBlindness) {
  ASSERT_GE(plot_palette().size(), 8u);
  // A CIEDE2000 difference of 20 or more reads as clearly different colours at a glance
  // (common practice for categorical palettes, no single source); 24 is what the chosen
  // five reach.
  EXPECT_GE(closest_pair(5, kIdentity), 20.0);
  EXPECT_GE(closest_pair(5, kDeuteranopia), 20.0);
  EXPECT_GE(closest_pair(5, kProtanopia), 20.0);
  // The rest of the eight are for crowded charts: still apart, less strongly.
  EXPECT_GE(closest_pair(8, kIdentity), 12.0);
  EXPECT_GE(closest_pair(8, kDeuteranopia), 12.0);
  EXPECT_GE(closest_pair(8, kProtanopia), 12.0);
}

TEST(Palette, EveryColourHasThreeToOneContrastWithTheGround) {
  const double ground = relative_luminance(from_hex("#fbf8f1"));  // report::kGround
  for (std::string_view colour : plot_palette()) {
    const double l = relative_luminance(from_hex(colour));
    EXPECT_GE((ground + 0.05) / (l + 0.05), 3.0) << colour;
  }
}

TEST(Palette, TheOldPaletteWouldHaveFailed) {
  // The palette before issue 19: its first and third colours, deep teal and plum, nearly
  // merge under deuteranopia (CIEDE2000 2.4), and its ochre had 2.4:1 contrast.
  const Lab teal = to_lab(simulate(from_hex("#1d6a75"), kDeuteranopia));
  const Lab plum = to_lab(simulate(from_hex("#7d3c6e"), kDeuteranopia));
  EXPECT_LT(ciede2000(teal, plum), 5.0);
}

}  // namespace
}  // namespace credence
