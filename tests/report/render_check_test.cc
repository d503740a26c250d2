// The report page in headless Chromium: no console messages, a screenshot that is not
// blank, every chart and section in the DOM (tests/tools/render_check.py does the looking).
#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <random>

#include "credence/html_report.h"
#include "credence/plot.h"
#include "report/report_testing.h"
#include "testing/seed.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

const char* kChromium = "/usr/bin/chromium";

// A page with every kind of block and chart, from invented numbers.
std::string sample_report(std::uint64_t seed, int& figures, int& sections) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> noise(0, 1);
  std::uniform_real_distribution<double> unit(0, 1);
  const std::vector<std::string> methods = {"adam", "sgld", "sghmc", "rsghmc", "rsgd"};

  HtmlReport page("credence report: cold-store compressor faults");
  page.subtitle("demo_cold_store.csv \xC2\xB7 5 methods \xC2\xB7 3000 rows (600 held out)");
  page.section("Data and split");
  page.key_values({{"table", "data/demo_cold_store.csv"}, {"target", "fault_14d"},
                   {"rows", "3000 (train 1920, validation 480, test 600)"},
                   {"classes", "no <fault>, fault"}});
  page.section("Settings and provenance");
  page.key_values({{"net", "2 x 32 tanh"}, {"credence", "0.1.0"}, {"seed", "17"}});
  page.note("Chain 3 of sgld stopped at step 812: the potential became NaN. Its kept samples "
            "before that are used.", NoteKind::kWarning);

  page.section("Training traces");
  TraceChart traces;  // one panel per chain: 1 + 4 <svg> elements
  traces.title = "Potential per chain (sghmc)";
  traces.y_label = "U / n";
  traces.burn_in = 1000;
  for (int c = 0; c < 4; ++c) {
    LineSeries s{"chain " + std::to_string(c + 1), {}, {}};
    for (int t = 0; t < 400; ++t) {
      s.x.push_back(t * 10);
      s.y.push_back(t == 0 ? 40.0 : 0.3 + 0.6 * std::exp(-t / 40.0) + 0.02 * noise(rng) + 0.01 * c);
    }
    traces.chains.push_back(s);
  }
  page.figure(render_trace_chart(traces), "Potential energy per row, every tenth step.");

  page.section("Scores");
  TextTable scores;
  scores.column("method").column("accuracy", ColumnAlign::kAuto, BestValue::kHighest)
      .column("NLL", ColumnAlign::kAuto, BestValue::kLowest).column("ECE", ColumnAlign::kAuto, BestValue::kLowest);
  ReliabilityChart reliability;
  LineChart rejection;
  rejection.title = "Accuracy against coverage";
  rejection.x_label = "coverage (most certain rows kept)";
  rejection.y_label = "accuracy";
  for (std::size_t m = 0; m < methods.size(); ++m) {
    ReliabilityTable table;
    table.bins = 10;
    double over = 0.03 * static_cast<double>(m) - 0.05;
    for (int b = 0; b < 10; ++b) {
      double lo = b * 0.1, hi = lo + 0.1;
      std::int64_t count = b < 4 ? 0 : static_cast<std::int64_t>(10 + 60 * (b - 3) * unit(rng));
      double conf = lo + 0.05;
      double acc = std::clamp(conf - over + 0.03 * noise(rng), 0.0, 1.0);
      table.rows.push_back({lo, hi, count, count ? conf : std::nan(""), count ? acc : std::nan("")});
    }
    table.ece = std::fabs(over) + 0.01;
    reliability.series.push_back({methods[m], table});
    RejectionCurve curve;
    for (int k = 1; k <= 300; ++k) {
      curve.coverage.push_back(k / 300.0);
      curve.accuracy.push_back(1.0 - 0.12 * std::pow(k / 300.0, 2 + 0.3 * static_cast<double>(m)));
    }
    rejection.series.push_back(rejection_series(methods[m], curve));
    scores.add_row({methods[m], std::to_string(0.88 + 0.01 * static_cast<double>(m)),
                    std::to_string(0.35 - 0.02 * static_cast<double>(m)),
                    std::to_string(table.ece)});
  }
  page.table(scores, "Held-out rows. Best per column highlighted.");
  page.section("Calibration");
  // Small multiples, one panel per method: 1 + 5 <svg> elements.
  page.figure(render_reliability_panels(reliability, 3), "Reliability, equal-width bins.");
  page.figure(render_line_chart(rejection), "Accuracy-rejection curves.");

  page.section("Uncertainty of right and wrong predictions");
  HistogramChart entropy;
  entropy.title = "Predictive entropy";
  entropy.x_label = "entropy (nats)";
  HistogramChart mi = entropy;
  mi.title = "Mutual information";
  mi.x_label = "mutual information (nats)";
  HistogramSeries right{"right", {}}, wrong{"wrong", {}}, right_mi{"right", {}}, wrong_mi{"wrong", {}};
  for (int i = 0; i < 900; ++i) right.values.push_back(0.69 * std::pow(unit(rng), 2.5));
  for (int i = 0; i < 100; ++i) wrong.values.push_back(0.69 * std::pow(unit(rng), 0.6));
  for (int i = 0; i < 900; ++i) right_mi.values.push_back(0.05 * std::pow(unit(rng), 3));
  for (int i = 0; i < 100; ++i) wrong_mi.values.push_back(0.08 * std::pow(unit(rng), 1.2));
  entropy.series = {right, wrong};
  mi.series = {right_mi, wrong_mi};
  page.figure(render_histogram(entropy), "Entropy of the model average.");
  page.figure(render_histogram(mi), "Mutual information between prediction and parameters.");

  page.section("Step-size sweep");
  LineChart sweep;
  sweep.title = "Held-out NLL against step size";
  sweep.x_label = "step size";
  sweep.y_label = "NLL (nats)";
  sweep.log_x = true;
  sweep.markers = true;
  for (const char* method : {"sghmc", "rsghmc"}) {
    LineSeries s{method, {}, {}};
    for (double h : {1e-4, 3e-4, 1e-3, 3e-3, 1e-2, 3e-2}) {
      s.x.push_back(h);
      bool relativistic = std::string(method) == "rsghmc";
      s.y.push_back(!relativistic && h > 1e-2 ? std::nan("") : 0.3 + 20 * h * (relativistic ? 0.3 : 1));
    }
    sweep.series.push_back(s);
  }
  sweep.missing = {{0, 0.1}};
  sweep.missing_label = "every chain diverged";
  page.figure(render_line_chart(sweep), "A cross marks a learning rate where every chain diverged.");
  page.note("Points missing from a curve are runs that diverged at that step size.");
  page.cautions();
  page.footer("Written by credence 0.1.0.");
  figures = 6 + 4 + 5;  // six charts, two of them with nested panels
  sections = 8;
  return page.render();
}

bool have_chromium() { return std::filesystem::exists(kChromium); }

std::pair<int, std::string> render_check(const std::string& page, const std::string& extra) {
  std::string script = std::string(CREDENCE_SOURCE_DIR) + "/tests/tools/render_check.py";
  return testing::run_shell(std::string("'") + CREDENCE_PYTHON + "' '" + script + "' '" + page +
                            "' --chromium " + kChromium + " " + extra);
}

TEST(RenderCheck, SampleReportRendersCleanly) {
  if (!have_chromium()) {
    GTEST_SKIP() << "no " << kChromium << ": install Debian's chromium package "
                 << "(scripts/bootstrap does) to run the browser check";
  }
  testing::TempDir dir;
  int figures = 0, sections = 0;
  std::string html = sample_report(testing::test_seed(7), figures, sections);
  std::string page = dir.write("report.html", html);
  std::string extra = "--expect-svg " + std::to_string(figures) + " --expect-sections " +
                      std::to_string(sections);
  // CREDENCE_SCREENSHOT=/path/shot.png keeps the screenshot, and the page as shot.png.html.
  if (const char* keep = std::getenv("CREDENCE_SCREENSHOT")) {
    extra += std::string(" --screenshot '") + keep + "'";
    std::filesystem::copy_file(page, std::string(keep) + ".html",
                               std::filesystem::copy_options::overwrite_existing);
  }
  auto [code, output] = render_check(page, extra);
  EXPECT_EQ(code, 0) << output;
}

// The check itself can fail: a blank page whose script logs an error is caught twice.
TEST(RenderCheck, CatchesConsoleErrorsAndBlankPages) {
  if (!have_chromium()) GTEST_SKIP() << "no " << kChromium;
  testing::TempDir dir;
  std::string page = dir.write(
      "bad.html",
      "<!DOCTYPE html><html><body><script>console.error('deliberate failure')</script></body></html>");
  auto [code, output] = render_check(page, "--expect-svg 1");
  EXPECT_EQ(code, 1) << output;
  EXPECT_NE(output.find("FAIL console"), std::string::npos) << output;
  EXPECT_NE(output.find("looks blank"), std::string::npos) << output;
  EXPECT_NE(output.find("<svg> elements"), std::string::npos) << output;
}

}  // namespace
}  // namespace credence
