// Tests of TextTable's three renderings and of the self-contained HTML page.
#include "credence/html_report.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cctype>

#include "credence/plot.h"
#include "report/report_testing.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

TextTable scores_table() {
  TextTable t;
  t.column("method").column("accuracy", ColumnAlign::kAuto, BestValue::kHighest)
      .column("NLL", ColumnAlign::kAuto, BestValue::kLowest).column("note");
  t.add_row({"adam", "0.912", "0.301 [0.28, 0.33]", "fast"});
  t.add_row({"sghmc", "0.915", "0.254 [0.23, 0.27]"});
  t.add_row({"r\xC3\xA9sgd", "0.915", "n/a", "tie, \"quoted\""});
  return t;
}

// Expected output written by hand: left-aligned text, right-aligned numbers, two spaces
// between columns, a dash rule as wide as each column; widths count characters.
TEST(TextTable, AlignedText) {
  std::string expected =
      "method  accuracy                 NLL  note\n"
      "------  --------  ------------------  -------------\n"
      "adam       0.912  0.301 [0.28, 0.33]  fast\n"
      "sghmc      0.915  0.254 [0.23, 0.27]\n"
      "r\xC3\xA9sgd      0.915                 n/a  tie, \"quoted\"\n";
  EXPECT_EQ(render_text(scores_table()), expected);
}

// RFC 4180 section 2: fields with commas, quotes or line breaks are quoted and their
// quotes doubled; records end in CRLF; short rows are padded with empty fields.
TEST(TextTable, Rfc4180Csv) {
  TextTable t = scores_table();
  t.add_row({"multi\nline", "1"});
  std::string expected =
      "method,accuracy,NLL,note\r\n"
      "adam,0.912,\"0.301 [0.28, 0.33]\",fast\r\n"
      "sghmc,0.915,\"0.254 [0.23, 0.27]\",\r\n"
      "r\xC3\xA9sgd,0.915,n/a,\"tie, \"\"quoted\"\"\"\r\n"
      "\"multi\nline\",1,,\r\n";
  EXPECT_EQ(render_csv(t), expected);
}

// Python's json module (standard library) reads the JSON back to the same cells: numbers
// as numbers, empty cells as None, everything else as the exact string.
TEST(TextTable, JsonReadsBackInPython) {
  testing::TempDir dir;
  TextTable t = scores_table();
  t.add_row({"ctl\x01 \\ \"x\"", "1e-3", "", "+5"});
  std::string json = dir.write("table.json", render_json(t));
  const char* script = R"py(
import json, sys
rows = json.load(open(sys.argv[1], encoding='utf-8'))
assert len(rows) == 4, rows
assert list(rows[0]) == ['method', 'accuracy', 'NLL', 'note'], rows[0]
assert rows[0]['accuracy'] == 0.912 and isinstance(rows[0]['accuracy'], float)
assert rows[0]['NLL'] == '0.301 [0.28, 0.33]'
assert rows[1]['note'] is None
assert rows[2]['method'] == 'r\u00e9sgd' and rows[2]['note'] == 'tie, "quoted"'
assert rows[3] == {'method': 'ctl\x01 \\ "x"', 'accuracy': 0.001, 'NLL': None, 'note': '+5'}, rows[3]
print('ok')
)py";
  auto [code, output] = testing::run_python(dir, script, "'" + json + "'");
  EXPECT_EQ(code, 0) << output << render_json(t);
}

TEST(TextTable, HtmlMarksTheBestCellsAndEscapes) {
  std::string html = render_html(scores_table());
  // accuracy: two rows tie at 0.915, both best; NLL: 0.254 is lowest, "n/a" never wins.
  auto count = [&](const std::string& needle) {
    std::size_t n = 0;
    for (std::size_t at = html.find(needle); at != std::string::npos; at = html.find(needle, at + 1)) ++n;
    return n;
  };
  EXPECT_EQ(count("class=\"num best\""), 3u) << html;
  EXPECT_NE(html.find("<td class=\"num best\">0.254 [0.23, 0.27]</td>"), std::string::npos);
  EXPECT_NE(html.find("<td class=\"num best\">0.915</td>"), std::string::npos);
  EXPECT_NE(html.find("<td>tie, &quot;quoted&quot;</td>"), std::string::npos);
  EXPECT_NE(html.find("<th class=\"num\">NLL</th>"), std::string::npos);
}

// Issue 19: with one run there is nothing to compare, so nothing is marked best (the old
// page marked every cell of a lone run's score row).
TEST(TextTable, HtmlMarksNothingBestInALoneRow) {
  TextTable t;
  t.column("method").column("accuracy", ColumnAlign::kAuto, BestValue::kHighest);
  t.column("NLL", ColumnAlign::kAuto, BestValue::kLowest);
  t.add_row({"adam", "0.912", "0.301"});
  EXPECT_EQ(render_html(t).find("best"), std::string::npos) << render_html(t);
  t.add_row({"sgld", "-", "n/a"});  // a second row without numbers still compares nothing
  EXPECT_EQ(render_html(t).find("best"), std::string::npos) << render_html(t);
  t.add_row({"sghmc", "0.915", "0.290"});
  EXPECT_NE(render_html(t).find("<td class=\"num best\">0.915</td>"), std::string::npos);
}

TEST(TextTable, LeadingNumbers) {
  EXPECT_EQ(leading_number("0.31 [0.28, 0.35]"), 0.31);
  EXPECT_EQ(leading_number("-1e-4"), -1e-4);
  EXPECT_EQ(leading_number("12 s"), 12.0);
  EXPECT_EQ(leading_number("95%"), 95.0);
  EXPECT_FALSE(leading_number("12abc"));
  EXPECT_FALSE(leading_number("adam"));
  EXPECT_FALSE(leading_number(""));
  EXPECT_FALSE(leading_number("nan"));
}

HtmlReport sample_page() {
  HtmlReport page("credence report: <cold-store> & \"friends\"");
  page.subtitle("demo.csv, 5 methods");
  page.paragraph("Top of the page.");
  page.section("Data and split");
  page.key_values({{"rows", "3000"}, {"<target>", "fault_14d"}});
  page.section("Scores");
  page.table(scores_table(), "Best per column in bold.");
  LineChart chart;
  chart.title = "trace";
  chart.series.push_back({"chain 1", {1, 2, 3}, {3, 2, 1}});
  page.figure(render_line_chart(chart), "A trace & its <caption>.");
  page.figure(render_line_chart(chart), "Second figure.");
  page.note("Chain 3 diverged.", NoteKind::kWarning);
  page.note("Bins with no rows draw nothing.");
  page.section("Scores");  // a repeated heading gets its own anchor
  page.cautions();
  return page;
}

std::string lower(std::string text) {
  std::transform(text.begin(), text.end(), text.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return text;
}

TEST(HtmlReport, NoExternalReferenceOfAnyKind) {
  std::string html = lower(sample_page().render());
  for (const char* bad : {"http://", "https://", "src=", "<link", "<script", "@import", "url(h",
                          "//fonts", "<img", "<iframe", "<object"}) {
    EXPECT_EQ(html.find(bad), std::string::npos) << bad;
  }
  // The only url() is a clip path inside an inline chart: a fragment of the page itself.
  for (std::size_t at = html.find("url("); at != std::string::npos; at = html.find("url(", at + 1)) {
    EXPECT_EQ(html[at + 4], '#') << html.substr(at, 30);
  }
  EXPECT_NE(html.find("content-security-policy"), std::string::npos);
}

TEST(HtmlReport, EverySectionWithItsAnchorAndContentsEntry) {
  std::string html = sample_page().render();
  for (const char* anchor : {"s-data-and-split", "s-scores", "s-scores-2", "s-cautions"}) {
    EXPECT_NE(html.find(std::string("<section id=\"") + anchor + "\""), std::string::npos)
        << anchor;
    EXPECT_NE(html.find(std::string("href=\"#") + anchor + "\""), std::string::npos) << anchor;
  }
  EXPECT_NE(html.find("<section class=\"preamble\">"), std::string::npos);
  EXPECT_NE(html.find("<div class=\"warning\">"), std::string::npos);
  EXPECT_NE(html.find("<div class=\"note\">"), std::string::npos);
  EXPECT_NE(html.find("<dt>&lt;target&gt;</dt><dd>fault_14d</dd>"), std::string::npos);
  EXPECT_NE(html.find(">A trace &amp; its &lt;caption&gt;.</figcaption>"), std::string::npos);
  // Captions wrap at their chart's width, so charts that fit side by side stay side by
  // side (a 560 px caption under a 420 px chart made them stack).
  const std::size_t svg = html.find("<svg ");
  const std::size_t width = html.find(" width=\"", svg) + 8;
  const std::string chart_width = html.substr(width, html.find('"', width) - width);
  EXPECT_NE(html.find("<figcaption style=\"max-width: " + chart_width + "px\">"),
            std::string::npos) << chart_width;
  EXPECT_NE(html.find("<title>credence report: &lt;cold-store&gt; &amp; &quot;friends&quot;</title>"),
            std::string::npos);
  // Both figures share one side-by-side group.
  std::size_t group = html.find("<div class=\"figures\">");
  ASSERT_NE(group, std::string::npos);
  EXPECT_EQ(html.find("<div class=\"figures\">", group + 1), std::string::npos);
}

TEST(HtmlReport, CautionsUseTheSharedWords) {
  std::string text(cautions_text());
  EXPECT_NE(text.find("held-out rows"), std::string::npos);
  EXPECT_NE(text.find("health, credit or safety"), std::string::npos);
  EXPECT_NE(text.find("licensed"), std::string::npos);
  std::string html = sample_page().render();
  std::string first_paragraph = text.substr(0, text.find("\n\n"));
  EXPECT_NE(html.find(first_paragraph), std::string::npos);
}

}  // namespace
}  // namespace credence
