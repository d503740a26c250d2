// The demo-sized report in headless Chromium at 1,400 and 800 px: screenshots kept in the
// test output, nothing scrolls sideways, and no serious or critical WCAG 2.1 AA violation
// by axe-core's rules (tests/tools/page_audit.py does the looking; issue 19).
//
// Screenshots: <build>/test-output/report/<page>-<width>px.png (printed by the test).
#include <gtest/gtest.h>

#include <filesystem>
#include <string>

#include "report/report_testing.h"
#include "testing/read_text.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

namespace fs = std::filesystem;

const char* kChromium = "/usr/bin/chromium";

bool have_chromium() { return fs::exists(kChromium); }
bool have_axe() { return fs::exists(CREDENCE_AXE_JS); }

std::pair<int, std::string> audit(const std::string& page, const std::string& extra) {
  const std::string script = std::string(CREDENCE_SOURCE_DIR) + "/tests/tools/page_audit.py";
  return testing::run_shell(std::string("'") + CREDENCE_PYTHON + "' '" + script + "' '" + page +
                            "' --chromium " + kChromium + " --out '" + CREDENCE_TEST_OUTPUT +
                            "' " + extra);
}

// The demo table's reports, made once: a comparison of an optimizer and a sampler (the
// page `credence compare` writes) and one run alone (`credence report`), on small budgets.
class DemoReports : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    fs::create_directories(CREDENCE_TEST_OUTPUT);
    const std::string demo = std::string(CREDENCE_SOURCE_DIR) + "/data/demo.csv";
    const std::string dir = std::string(CREDENCE_TEST_OUTPUT) + "/demo";
    fs::remove_all(dir);
    made_ = testing::run_credence("--quiet compare '" + demo +
                                  "' --target fault_14d --id unit_id --impute median "
                                  "--methods adam,sgld --epochs 3 --chains 2 --samples 20 "
                                  "--out '" + dir + "'");
    if (made_.exit_code != 0) return;
    // A file name unlike the method's, so the page shows which of the two it names.
    fs::copy_file(dir + "/sgld.h5", dir + "/first-try.h5");
    made_ = testing::run_credence("--quiet report '" + dir + "/first-try.h5' '" + demo +
                                  "' --out '" + std::string(CREDENCE_TEST_OUTPUT) +
                                  "/one-run.html'");
    fs::copy_file(dir + "/report.html", std::string(CREDENCE_TEST_OUTPUT) + "/compare.html",
                  fs::copy_options::overwrite_existing);
  }
  static std::string page(const std::string& name) {
    return std::string(CREDENCE_TEST_OUTPUT) + "/" + name + ".html";
  }
  static inline testing::CommandOutput made_;
};

// What issue 19 found on a lone run's page: every score "best", the file name where the
// method belongs, about 60 settings rows mostly of other methods, `NANaNnull?`, and no
// precision-recall or ROC figure.
TEST_F(DemoReports, PagesNameTheMethodShowItsSettingsAndTheTwoClassCurves) {
  ASSERT_EQ(made_.exit_code, 0) << made_.output;
  const std::string one = testing::read_text(page("one-run"));
  const std::string both = testing::read_text(page("compare"));
  EXPECT_EQ(one.find("best\""), std::string::npos);  // no cell of class "best" or "num best"
  EXPECT_NE(both.find("class=\"num best\""), std::string::npos);
  EXPECT_NE(one.find("<td>sgld</td>"), std::string::npos);
  EXPECT_EQ(one.find("<td>first-try</td>"), std::string::npos);
  for (const char* gone : {"NANaN", "sghmc_alpha", "relativistic_", "santa_", ">burn_in<"}) {
    EXPECT_EQ(one.find(gone), std::string::npos) << gone;
  }
  EXPECT_NE(one.find("<dt>missing values</dt>"), std::string::npos);
  EXPECT_NE(both.find("<dt>steps per chain</dt>"), std::string::npos);  // adam's budget
  for (const std::string& html : {one, both}) {
    EXPECT_NE(html.find("aria-label=\"Precision against recall ("), std::string::npos);
    EXPECT_NE(html.find("aria-label=\"ROC curve ("), std::string::npos);
    EXPECT_NE(html.find("aria-label=\"Observed rate of "), std::string::npos);
  }
}

TEST_F(DemoReports, NothingScrollsSidewaysAt1400And800Pixels) {
  if (!have_chromium()) {
    GTEST_SKIP() << "no " << kChromium << ": scripts/bootstrap installs Debian's chromium";
  }
  ASSERT_EQ(made_.exit_code, 0) << made_.output;
  for (const char* name : {"compare", "one-run"}) {
    auto [code, output] = audit(page(name), "--widths 1400,800");
    EXPECT_EQ(code, 0) << output;
    std::cout << output;  // names the screenshots
  }
}

TEST_F(DemoReports, NoSeriousOrCriticalAccessibilityViolation) {
  if (!have_chromium()) GTEST_SKIP() << "no " << kChromium;
  if (!have_axe()) {
    GTEST_SKIP() << "axe-core is not installed at " << CREDENCE_AXE_JS
                 << ": scripts/bootstrap installs it with npm (Debian packages nodejs, npm)";
  }
  ASSERT_EQ(made_.exit_code, 0) << made_.output;
  for (const char* name : {"compare", "one-run"}) {
    auto [code, output] = audit(page(name), std::string("--widths 1400 --axe-only --axe '") +
                                                CREDENCE_AXE_JS + "'");
    EXPECT_EQ(code, 0) << output;
    EXPECT_NE(output.find("axe: "), std::string::npos) << output;
  }
}

// The checks can fail: a page wider than the window, a box that scrolls, and grey text
// on grey (contrast 1.3:1, below WCAG 2.1 AA's 4.5:1, success criterion 1.4.3).
TEST(PageAudit, CatchesSidewaysScrollingAndLowContrast) {
  if (!have_chromium()) GTEST_SKIP() << "no " << kChromium;
  testing::TempDir dir;
  const std::string bad = dir.write(
      "bad.html",
      "<!DOCTYPE html><html lang=\"en\"><head><title>bad</title></head><body><main>"
      "<div style=\"width:1900px\">wide</div>"
      "<div style=\"overflow-x:auto;width:300px\"><div style=\"width:600px\">box</div></div>"
      "<p style=\"color:#999;background:#bbb\">hard to read</p></main></body></html>");
  auto [code, output] = audit(bad, have_axe() ? std::string("--widths 1400 --axe '") +
                                                    CREDENCE_AXE_JS + "'"
                                              : std::string("--widths 1400"));
  EXPECT_EQ(code, 1) << output;
  EXPECT_NE(output.find("the page scrolls sideways"), std::string::npos) << output;
  EXPECT_NE(output.find("reaches past the viewport"), std::string::npos) << output;
  EXPECT_NE(output.find("\"problem\": \"scrolls sideways\""), std::string::npos) << output;
  if (have_axe()) {
    EXPECT_NE(output.find("color-contrast"), std::string::npos) << output;
  }
}

}  // namespace
}  // namespace credence
