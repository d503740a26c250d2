// html_report: tables for the terminal, CSV, JSON and HTML, and one self-contained HTML report.
//
// A TextTable is plain data (column names, cells as text) rendered three ways: aligned
// columns for a terminal, CSV for other programs, and an HTML table inside a report.
// HtmlReport collects a page block by block and render() returns the whole document: CSS
// inline, charts as inline SVG, nothing fetched from anywhere (no URL, font, script or
// image file; a content-security policy in the page forbids them too), readable with
// scripting off and printable. Every piece of text is escaped, so user data (class names,
// column names, file paths) can go in as it is. Objects are not shared between threads;
// the free functions are pure.
//
//   HtmlReport page("credence report: cold-store run");
//   page.subtitle("run.h5, 5 methods, 3000 rows");
//   page.section("Data and split");
//   page.key_values({{"rows", "3000"}, {"test rows", "600"}});
//   page.section("Scores");
//   page.table(scores, "Held-out rows; best per column in bold.");
//   page.figure(render_reliability_diagram(chart), "Accuracy against confidence.");
//   page.note("Chain 3 diverged at step 812 and was left out.", NoteKind::kWarning);
//   page.cautions();
//   std::string html = page.render();
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

namespace credence {

/// The standard cautions every output carries (DESIGN.md section 9): plain text, two
/// paragraphs separated by a blank line, no markup. The CLI prints it; reports quote it.
std::string_view cautions_text();

// ---------------------------------------------------------------------------------------
// Tables

/// Cell alignment; kAuto right-aligns a column whose non-empty cells all start with a
/// number ("0.25", "-3", "1e-4", "0.31 [0.28, 0.35]", "12 s") or is a placeholder ("-",
/// "NaN", "n/a"), else left-aligns it.
enum class ColumnAlign { kAuto, kLeft, kRight };

/// Which value of a column is best, for highlighting in HTML (kNone: no highlight). Cells
/// compare by their leading number; cells without one never win; ties all win; a column
/// with fewer than two numbers marks nothing (one value has nothing to beat).
enum class BestValue { kNone, kLowest, kHighest };

struct TextColumn {
  std::string name;
  ColumnAlign align = ColumnAlign::kAuto;
  BestValue best = BestValue::kNone;
};

/// A table of text cells. Rows shorter than the header are padded with empty cells;
/// longer rows are cut to the header's width.
struct TextTable {
  std::vector<TextColumn> columns;
  std::vector<std::vector<std::string>> rows;

  /// Adds a column and returns *this, for chaining.
  TextTable& column(std::string name, ColumnAlign align = ColumnAlign::kAuto,
                    BestValue best = BestValue::kNone);
  /// Adds a row of cells.
  void add_row(std::vector<std::string> cells) { rows.push_back(std::move(cells)); }
};

/// Columns separated by two spaces, padded to their widest cell (counted in characters,
/// not bytes), with a rule of dashes under each header; each line ends in "\n".
std::string render_text(const TextTable& table);
/// RFC 4180 CSV: a header line, then one line per row, each ending in CRLF; a field with a
/// comma, a double quote, CR or LF is quoted, its quotes doubled.
std::string render_csv(const TextTable& table);
/// JSON (RFC 8259): an array with one object per row, keys the column names in order. A
/// cell that is wholly a finite number becomes a JSON number, an empty cell null, any other
/// cell a string. Ends in "\n".
std::string render_json(const TextTable& table);
/// An HTML <table> (escaped) with numeric columns right-aligned in tabular figures and the
/// best cells of each column whose `best` is not kNone marked with class "best".
std::string render_html(const TextTable& table);

/// The leading number of a cell ("0.31 [0.28, 0.35]" gives 0.31; "12abc" and "nan" give
/// none). The number must end the cell or be followed by a space, '%', ',', '(' or '['.
std::optional<double> leading_number(std::string_view cell);

// ---------------------------------------------------------------------------------------
// The page

enum class NoteKind { kNote, kWarning };

/// One self-contained HTML page built block by block in order. Blocks before the first
/// section() go at the top of the page; section() starts a section with a heading, an
/// anchor (unique, made from its title) and an entry in the table of contents.
class HtmlReport {
 public:
  explicit HtmlReport(std::string title);

  /// A line under the title (for example the data file and when the run was made).
  void subtitle(std::string text);
  /// Starts a section; later blocks go into it.
  void section(std::string heading);
  /// A paragraph of text.
  void paragraph(std::string text);
  /// A two-column table of names and values (provenance, settings).
  void key_values(std::vector<std::pair<std::string, std::string>> items);
  /// A data table with an optional caption below it.
  void table(const TextTable& table, std::string caption = {});
  /// An SVG chart (as render_*() return it) with a caption. Consecutive figures sit side
  /// by side where the page is wide enough. The SVG is inlined as given apart from its
  /// namespace attribute, which HTML supplies; pass only SVG made by credence's plot
  /// module or other trusted code, since it is not escaped.
  void figure(std::string svg, std::string caption);
  /// A boxed note; kWarning draws it in the warning colour.
  void note(std::string text, NoteKind kind = NoteKind::kNote);
  /// The "Cautions" section with cautions_text().
  void cautions();
  /// A line in the page footer (for example the credence version).
  void footer(std::string text);

  /// The page as one HTML document.
  std::string render() const;

 private:
  struct Block {
    enum class Kind { kParagraph, kRaw, kFigure, kNote, kWarning } kind;
    std::string html;  // already escaped
  };
  struct Section {
    std::string heading;
    std::string anchor;
    std::vector<Block> blocks;
  };
  void add(Block::Kind kind, std::string html);

  std::string title_;
  std::string subtitle_;
  std::string footer_;
  std::vector<Section> sections_;  // sections_[0] is the untitled top of the page
};

}  // namespace credence
