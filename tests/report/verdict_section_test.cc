// The report's verdict section: each run's end-of-run checks in plain words. Verdicts are
// built here by hand, so the page is checked against values this test chose; the HTML
// is read back with Python's html.parser (standard library) to confirm the text a
// reader sees, not just the markup this project writes.
#include "report/verdict_section.h"

#include <gtest/gtest.h>

#include <fstream>

#include "report/report_testing.h"
#include "testing/read_text.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

RunVerdict finished() {
  RunVerdict v;
  for (const char* name : {"drift", "constant", "pinned", "mixing", "predictions", "scale"}) {
    v.checks.push_back({name, CheckOutcome::kPassed, 1.0, 1.01, std::string(name) + " fine"});
  }
  v.checks[2].outcome = CheckOutcome::kNotApplied;
  v.headline = "passed every check";
  return v;
}

RunVerdict unfinished() {
  RunVerdict v = finished();
  v.checks[4] = {"predictions", CheckOutcome::kFailed, 1.37, 1.01,
                 "the chains disagree on their predictions (probe rows): R-hat 1.370 on "
                 "probe_prob[133] (above 1.01)"};
  v.checks[3].outcome = CheckOutcome::kFailed;
  v.more_steps_per_chain = 179364;
  v.headline = "NOT done: mixing, predictions";
  return v;
}

std::string page_with(const std::vector<report::LabelledVerdict>& runs) {
  HtmlReport page("verdicts");
  report::verdict_section(page, runs);
  return page.render();
}

TEST(VerdictSection, DoneAndNotDoneRunsReadPlainly) {
  const RunVerdict good = finished();
  const RunVerdict bad = unfinished();
  const std::string html = page_with({{"adam <restarts>", &good}, {"rsghmc", &bad}, {"sgld", nullptr}});
  EXPECT_NE(html.find("<section id=\"s-can-these-runs-be-trusted\""), std::string::npos);
  // Labels are escaped; a finished run is a note, an unfinished one a warning that names
  // what failed, what to do and the verdict's estimate of the steps still needed.
  EXPECT_NE(html.find("<div class=\"note\"><strong>Note.</strong>adam &lt;restarts&gt;: done."),
            std::string::npos) << html;
  const std::size_t warning = html.find("<div class=\"warning\"><strong>Warning.</strong>rsghmc: NOT done.");
  ASSERT_NE(warning, std::string::npos) << html;
  const std::string box = html.substr(warning, html.find("</div>", warning) - warning);
  EXPECT_NE(box.find("Do the chains predict alike? No"), std::string::npos) << box;
  EXPECT_NE(box.find("Are there enough nearly independent draws? No"), std::string::npos) << box;
  EXPECT_NE(box.find("179364 more steps per chain"), std::string::npos) << box;
  EXPECT_EQ(box.find("settled"), std::string::npos) << "a passed check is not listed as failed";
  // Every check, with its outcome and message, for both judged runs; the unjudged run is
  // left out rather than shown as done.
  EXPECT_NE(html.find("<dd>NO (predictions): the chains disagree"), std::string::npos);
  EXPECT_NE(html.find("<dd>does not apply (pinned): pinned fine</dd>"), std::string::npos);
  EXPECT_EQ(html.find("sgld"), std::string::npos);

  // What a reader sees, through Python's html.parser: the section's text in order.
  testing::TempDir dir;
  const std::string page_path = (dir.path() / "page.html").string();
  std::ofstream(page_path) << html;
  const std::string script = (dir.path() / "text.py").string();
  std::ofstream(script) << "import sys, html.parser\n"
                           "class P(html.parser.HTMLParser):\n"
                           "    def __init__(self):\n"
                           "        super().__init__(); self.parts = []\n"
                           "    def handle_data(self, d): self.parts.append(d)\n"
                           "p = P(); p.feed(open(sys.argv[1]).read())\n"
                           "text = ' '.join(' '.join(p.parts).split())\n"
                           "a = text.index('adam <restarts>: done.')\n"
                           "b = text.index('rsghmc: NOT done.')\n"
                           "assert a < b, text\n"
                           "assert 'R-hat 1.370 on probe_prob[133]' in text[b:], text\n"
                           "print('ok')\n";
  const std::string log = (dir.path() / "log.txt").string();
  const int status = std::system((std::string(CREDENCE_PYTHON) + " '" + script + "' '" + page_path +
                                  "' > '" + log + "' 2>&1").c_str());
  EXPECT_EQ(status, 0) << testing::read_text(log);
}

TEST(VerdictSection, NoVerdictNoSection) {
  const std::string html = page_with({{"sgld", nullptr}});
  EXPECT_EQ(html.find("Can these runs be trusted?"), std::string::npos);
}

TEST(VerdictSection, EveryCheckHasAQuestion) {
  for (const char* name :
       {"drift", "constant", "pinned", "mixing", "predictions", "scale", "collapsed"}) {
    EXPECT_NE(report::check_question(name), std::string_view(name)) << name;
  }
}

}  // namespace
}  // namespace credence
