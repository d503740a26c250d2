// plot_heatmap: a grid of cells coloured by one measure (the tuning map of sweep), as one
// standalone SVG document in the look of plot.h. A pure function, safe from several
// threads at once.
//
// Colour alone never carries a number: every cell prints its value, and has a <title> a
// screen reader or a hover shows. Colour runs from a pale ground (lowest value) through sky blue
// to deep cobalt (highest), light to dark, so it reads under red-green colour blindness; the
// text on each cell is ink, white or black, whichever reads at 4.5:1 or more on its fill. A cell
// where a chain diverged is pale rust, crossed out, and says so (its value still printed); a cell with no value is
// white in a dashed frame, with a dash; the chosen cell gets a heavy ink frame. The legend names the marks,
// and a bar under the plot spans the lowest to the highest value.
//
//   HeatMapChart map;
//   map.title = "ESS per 1000 gradients";
//   map.x_label = "max move";  map.x_labels = {"0.003", "0.01"};
//   map.y_label = "mass";      map.y_labels = {"0.1", "1"};
//   map.values = {v00, v01, v10, v11};  // row (y) by row, x within a row
//   map.chosen = 3;
//   std::string svg = render_heat_map(map);
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "credence/plot.h"

namespace credence {

struct HeatMapChart {
  std::string title;
  std::string x_label;                // what the columns vary
  std::string y_label;                // what the rows vary
  std::vector<std::string> x_labels;  // one per column, left to right
  std::vector<std::string> y_labels;  // one per row, bottom to top
  /// Row-major values: cell (row r, column c) is values[r * x_labels.size() + c]; NaN or
  /// infinite: no value. A shorter vector leaves the missing cells without a value.
  std::vector<double> values;
  std::vector<bool> diverged;         // same indexing; true: some chain diverged there
  std::optional<std::size_t> chosen;  // the chosen cell's index, if any
  int digits = 3;                     // significant digits of the printed values
  std::string no_value_label = "no value";  // legend text for a cell without a value
  PlotFrame frame{500, 380};
};

/// The heat map as a standalone SVG document. Never fails: an empty grid draws its frame
/// with a "no data" mark.
std::string render_heat_map(const HeatMapChart& chart);

/// The fill of a cell at `t` in [0, 1] of the value range ("#rrggbb"); t is clamped.
std::string heat_colour(double t);

/// The colour of text on a cell of `fill`: the chart ink, white or black, whichever gives a
/// contrast of at least 4.5:1 (WCAG 2.1 success criterion 1.4.3), ink first, then white.
std::string cell_text_colour(const std::string& fill);

/// WCAG 2.1 contrast ratio (success criterion 1.4.3) of two "#rrggbb" colours, >= 1.
double contrast_ratio(const std::string& a, const std::string& b);

}  // namespace credence
