// compare's bounded re-run of a sampler that is not done (src/compare/compare_extend.h). The
// figures are worked by hand from the rule in the header: this checks the arithmetic of
// the rule and its limits; compare_test checks the re-run end to end.
#include "compare/compare_extend.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <optional>
#include <string>
#include <vector>

namespace credence {
namespace {

RunVerdict verdict_failing(std::vector<std::string> failed, std::optional<std::int64_t> more) {
  RunVerdict v;
  for (const char* name : {"drift", "constant", "pinned", "mixing", "predictions", "scale"}) {
    const bool fails = std::find(failed.begin(), failed.end(), name) != failed.end();
    v.checks.push_back({name, fails ? CheckOutcome::kFailed : CheckOutcome::kPassed, 0, 0, ""});
  }
  v.more_steps_per_chain = more;
  v.headline = failed.empty() ? "passed every check" : "NOT done: " + failed.front();
  return v;
}

TEST(CompareExtend, DoneRunsAndUnfixableChecksAreNotReRun) {
  EXPECT_EQ(plan_extension(verdict_failing({}, {}), 6000, 1.0, 60).steps, 0);
  EXPECT_TRUE(plan_extension(verdict_failing({}, {}), 6000, 1.0, 60).why.empty());
  const ExtendPlan constant = plan_extension(verdict_failing({"constant"}, {}), 6000, 1.0, 60);
  EXPECT_EQ(constant.steps, 0);
  EXPECT_NE(constant.why.find("not re-run"), std::string::npos) << constant.why;
  EXPECT_EQ(plan_extension(verdict_failing({"predictions"}, 1000), 6000, 1.0, 0).steps, 0)
      << "--extend-seconds 0 never re-runs";
}

TEST(CompareExtend, TheVerdictsEstimateBoundedBySteps) {
  // The demo's first run: 6000 steps in about 1 s, the verdict asking 175,000 more steps
  // after burn-in: wanted 6000 + 4 x 175000 = 706000 (compare_extend.h says why 4, not the
  // 2 that samples exactly the estimate; 356000 before, when this check failed), within
  // both limits.
  const ExtendPlan demo = plan_extension(verdict_failing({"mixing", "predictions"}, 175000), 6000, 0.5, 120);
  EXPECT_EQ(demo.steps, 706000);
  EXPECT_NE(demo.why.find("706000 wanted from the verdict's estimate"), std::string::npos) << demo.why;
  // Asking for more than the step limit gets the limit.
  const ExtendPlan capped = plan_extension(verdict_failing({"mixing"}, 1000000), 6000, 0.1, 60);
  EXPECT_EQ(capped.steps, kExtendMaxSteps);
  EXPECT_NE(capped.why.find("limit " + std::to_string(kExtendMaxSteps) + " steps per chain"),
            std::string::npos)
      << capped.why;
  // Within the limits: 6000 + 4 x 20000.
  EXPECT_EQ(plan_extension(verdict_failing({"drift"}, 20000), 6000, 1.0, 60).steps, 86000);
  // No estimate: eight times the first run.
  EXPECT_EQ(plan_extension(verdict_failing({"scale"}, {}), 6000, 1.0, 60).steps, 48000);
}

TEST(CompareExtend, WallTimeBoundsTheReRun) {
  // 6000 steps in 10 s: 60 s allow 36000 steps.
  const ExtendPlan slow = plan_extension(verdict_failing({"mixing"}, 175000), 6000, 10.0, 60);
  EXPECT_EQ(slow.steps, 36000);
  EXPECT_NE(slow.why.find("--extend-seconds"), std::string::npos) << slow.why;
  // 6000 steps in 40 s: 60 s allow 9000, under twice the first run: not worth a re-run.
  const ExtendPlan too_slow = plan_extension(verdict_failing({"mixing"}, 175000), 6000, 40.0, 60);
  EXPECT_EQ(too_slow.steps, 0);
  EXPECT_NE(too_slow.why.find("under twice"), std::string::npos) << too_slow.why;
}

TEST(CompareExtend, HalfBurnsInTheRestKeepsTheSamples) {
  const ExtendShare share = extend_share(200000, 400);  // 100000 / 400 = 250
  EXPECT_EQ(share.thin, 250);
  EXPECT_EQ(share.burn_in, 100000);
  const ExtendShare odd = extend_share(36001, 400);  // 18001 / 400 = 45 (rounded down)
  EXPECT_EQ(odd.thin, 45);
  EXPECT_EQ(odd.burn_in, 36001 - 45 * 400);
}

}  // namespace
}  // namespace credence
