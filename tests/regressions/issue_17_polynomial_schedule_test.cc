// Issue 17: the polynomial schedule kept a sampler's samples with equal weight, although
// a decreasing step needs each kept sample weighted by its step size (docs/methods.md
// section 1, "Collecting the ensemble"; SGLD, ICML 2011). The run file keeps equal
// weights, so samplers now refuse the schedule; optimizers, which keep one final
// iterate, still take it.
#include <gtest/gtest.h>

#include <cstdio>
#include <filesystem>

#include "credence/samplers.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

TEST(Issue17PolynomialSchedule, SamplersRefuseItOptimizersTakeIt) {
  for (Method method : {Method::kSgld, Method::kPsgld, Method::kSghmc, Method::kRsghmc,
                        Method::kSgd, Method::kMomentum, Method::kRsgd, Method::kAdam}) {
    SamplerSettings s;
    s.method = method;
    s.schedule.kind = ScheduleKind::kPolynomial;
    const Status status = validate(s);
    if (is_sampler(method)) {
      EXPECT_EQ(status.code(), StatusCode::kInvalidInput) << method_name(method);
      EXPECT_NE(status.message().find("polynomial"), std::string::npos) << status.message();
    } else {
      EXPECT_TRUE(status.ok()) << method_name(method) << ": " << status.to_string();
    }
  }
}

TEST(Issue17PolynomialSchedule, TrainRefusesItForASamplerWithExitCode2) {
  testing::TempDir dir;
  const std::string csv = (dir.path() / "t.csv").string();
  {
    std::FILE* f = std::fopen(csv.c_str(), "w");
    std::fputs("a,y\n1,p\n2,q\n3,p\n4,q\n5,p\n6,q\n7,p\n8,q\n9,p\n10,q\n", f);
    std::fclose(f);
  }
  const std::string out = (dir.path() / "run.h5").string();
  const auto refused = testing::run_credence("--quiet train '" + csv + "' --target y --method sgld "
                                             "--schedule polynomial --out '" + out + "'");
  EXPECT_EQ(refused.exit_code, 2) << refused.output;
  EXPECT_NE(refused.output.find("--schedule polynomial"), std::string::npos) << refused.output;
  EXPECT_NE(refused.output.find("sgld"), std::string::npos) << refused.output;
  EXPECT_FALSE(std::filesystem::exists(out));
}

}  // namespace
}  // namespace credence
