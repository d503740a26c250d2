// compare, report and sweep end to end on an invented table (credence synth): every
// method gets a row with every metric and the same gradient budget (checked by
// tests/tools/check_compare.py with Python's json and csv modules), the report is
// self-contained and renders in headless Chromium, the true probabilities beat every
// trained model, and sweep marks divergence instead of failing.
#include <gtest/gtest.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "testing/read_text.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::run_credence;

using testing::read_text;

int run_python(const std::string& args, const std::string& log) {
  const int status = std::system((std::string(CREDENCE_PYTHON) + " " + args + " > '" + log +
                                  "' 2>&1")
                                     .c_str());
  return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

class Compare : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new testing::TempDir();
    data_ = path("units.csv");
    truth_ = path("units.truth.csv");
    auto synth = run_credence("--quiet synth --scenario cold-store --rows 3000 --seed 4 --out '" +
                              data_ + "'");
    ASSERT_EQ(synth.exit_code, 0) << synth.output;
    // Half the rows held out, so the truth-versus-model check has 1500 test rows.
    compare_ = run_credence("--quiet compare '" + data_ +
                            "' --target fault_14d --id unit_id --impute median --test-fraction "
                            "0.5 --methods " + kMethods + " --epochs 15 --chains 2 --samples 30 "
                            "--hidden 16 --bootstrap 100 --truth '" + truth_ + "' --out '" +
                            path("cmp") + "'");
  }
  static void TearDownTestSuite() { delete dir_; }
  static std::string path(const std::string& name) { return (dir_->path() / name).string(); }

  // Writes `script` to <stem>.py in the test folder and runs it with Python on `run_files`
  // (names inside the folder); it passes by exiting 0, and its output is shown otherwise.
  static void expect_script_passes(const std::string& stem, const std::string& script,
                                   const std::vector<std::string>& run_files) {
    const std::string file = path(stem + ".py");
    std::ofstream(file) << script;
    std::string args = "'" + file + "'";
    for (const std::string& name : run_files) args += " '" + path(name) + "'";
    const std::string log = path(stem + ".txt");
    EXPECT_EQ(run_python(args, log), 0) << read_text(log);
  }

  static constexpr const char* kMethods = "adam,rsgd,sgld,sghmc,rsghmc";
  static testing::TempDir* dir_;
  static std::string data_;
  static std::string truth_;
  static testing::CommandOutput compare_;
};
testing::TempDir* Compare::dir_ = nullptr;
std::string Compare::data_;
std::string Compare::truth_;
testing::CommandOutput Compare::compare_;

TEST_F(Compare, OneRowPerMethodWithEveryMetricAndOneBudget) {
  ASSERT_EQ(compare_.exit_code, 0) << compare_.output;
  for (const char* method : {"adam", "rsgd", "sgld", "sghmc", "rsghmc"}) {
    EXPECT_NE(compare_.output.find(std::string("\n") + method + " "), std::string::npos)
        << method << " missing from the table:\n" << compare_.output;
  }
  EXPECT_NE(compare_.output.find("report: "), std::string::npos);
  const std::string log = path("check.txt");
  EXPECT_EQ(run_python("'" + std::string(CREDENCE_SOURCE_DIR) + "/tests/tools/check_compare.py' '" +
                           path("cmp") + "' " + kMethods,
                       log),
            0)
      << read_text(log);
}

TEST_F(Compare, EveryMethodGetsAVerdictInTheTextAndTheJson) {
  ASSERT_EQ(compare_.exit_code, 0) << compare_.output;
  // ... and in the report: one verdict block per method, a note or a warning.
  const std::string html = read_text(path("cmp/report.html"));
  ASSERT_NE(html.find("Can these runs be trusted?"), std::string::npos);
  for (const char* method : {"adam", "rsgd", "sgld", "sghmc", "rsghmc"}) {
    const bool done = html.find(std::string("</strong>") + method + ": done.") != std::string::npos;
    const bool not_done = html.find(std::string("</strong>") + method + ": NOT done.") != std::string::npos;
    EXPECT_TRUE(done != not_done) << method << " needs exactly one verdict block in the report";
  }
  for (const char* method : {"adam", "rsgd", "sgld", "sghmc", "rsghmc"}) {
    EXPECT_NE(compare_.output.find(std::string("\nverdict ") + method + ": "), std::string::npos)
        << method << " has no verdict under the table:\n" << compare_.output;
  }
  // summary.json: every row carries its verdict with the seven checks (Python's json module).
  const std::string script =
      "import json, sys; rows = json.load(open(sys.argv[1]))['methods']; "
      "assert all(len(r['verdict']['checks']) == 7 for r in rows), rows; "
      "assert all(c['outcome'] in ('ok', 'FAILED', 'n/a') for r in rows for c in r['verdict']['checks'])";
  const std::string log = path("verdict_check.txt");
  EXPECT_EQ(run_python("-c \"" + script + "\" '" + path("cmp/summary.json") + "'", log), 0)
      << read_text(log);
}

TEST_F(Compare, TrueProbabilitiesScoreBelowEveryTrainedModel) {
  // Sanity check of synth's truth file: on 1500 held-out rows the probabilities the labels
  // were drawn from must have a lower NLL than any model fitted to a sample of them.
  ASSERT_EQ(compare_.exit_code, 0) << compare_.output;
  const std::string script =
      "import json,sys; rows=json.load(open(sys.argv[1]))['methods']; "
      "bad=[r['method'] for r in rows if not r['truth_kl'] > 0]; "
      "print(bad); sys.exit(1 if bad else 0)";
  const std::string log = path("truth.txt");
  EXPECT_EQ(run_python("-c \"" + script + "\" '" + path("cmp/summary.json") + "'", log), 0)
      << read_text(log);
  // The NLL of the truth is printed by assess with --truth; compare it directly.
  auto assess = run_credence("assess '" + path("cmp/sghmc.h5") + "' '" + data_ +
                             "' --truth '" + truth_ + "' --bootstrap 0 --json '" +
                             path("a.json") + "'");
  ASSERT_EQ(assess.exit_code, 0) << assess.output;
  const std::string check =
      "import json,sys; m=json.load(open(sys.argv[1]))['metrics']; t=m['truth']; "
      "print(t); sys.exit(0 if t['truth_nll'] < m['nll'] else 1)";
  EXPECT_EQ(run_python("-c \"" + check + "\" '" + path("a.json") + "'", log), 0) << read_text(log);
}

TEST_F(Compare, ReportRendersInHeadlessChromium) {
  ASSERT_EQ(compare_.exit_code, 0) << compare_.output;
  const std::string log = path("render.txt");
  const int code = run_python("'" + std::string(CREDENCE_SOURCE_DIR) +
                                  "/tests/tools/render_check.py' '" + path("cmp/report.html") +
                                  "' --expect-sections 11",  // with "Decisions on the positive class"
                              log);
  if (code == 77) GTEST_SKIP() << "chromium is not installed (scripts/bootstrap installs it)";
  EXPECT_EQ(code, 0) << read_text(log);
}

TEST_F(Compare, ReportCommandWritesOnePage) {
  ASSERT_EQ(compare_.exit_code, 0) << compare_.output;
  auto report = run_credence("--quiet report '" + path("cmp/rsghmc.h5") + "' '" + data_ +
                             "' --bootstrap 50 --out '" + path("one.html") + "'");
  ASSERT_EQ(report.exit_code, 0) << report.output;
  const std::string html = read_text(path("one.html"));
  EXPECT_NE(html.find("Mixing diagnostics"), std::string::npos);
  // The run's end-of-run verdict in plain words (report/verdict_section.h).
  EXPECT_NE(html.find("Can these runs be trusted?"), std::string::npos);
  EXPECT_NE(html.find("Do the chains predict alike?"), std::string::npos);
  EXPECT_EQ(html.find("https://"), std::string::npos);
  auto bad = run_credence("report '" + path("cmp/rsghmc.h5") + "' '" + path("none.csv") +
                          "' --out '" + path("two.html") + "'");
  EXPECT_EQ(bad.exit_code, 2) << bad.output;
  EXPECT_FALSE(std::filesystem::exists(path("two.html")));
}

TEST_F(Compare, LinearPathReachesEveryMethodsNetworkAndIsRefusedWhereItCannotBe) {
  // Read back with h5py (an outside reader): with one hidden layer of 4 units, a network of
  // D inputs and K classes has (D+1)*4 + 5*K parameters, and (D+1)*K more with the linear
  // path (docs/run-file.md, /model; docs/prior.md, "The linear path").
  auto compared = run_credence("--quiet compare '" + data_ +
                               "' --target fault_14d --id unit_id --impute median --methods "
                               "adam,sgld --hidden 4 --linear-path on --epochs 2 --chains 1 "
                               "--samples 5 --bootstrap 0 --out '" +
                               path("linear") + "'");
  ASSERT_EQ(compared.exit_code, 0) << compared.output;
  const std::string script =
      "import sys, h5py\n"
      "for name in sys.argv[1:]:\n"
      "    f = h5py.File(name, 'r')\n"
      "    d = int(f['preprocessing'].attrs['input_width'])\n"
      "    k = f['preprocessing/class_names'].shape[0]\n"
      "    width = f['samples/theta'].shape[1]\n"
      "    assert 'linear_path on' in str(f['model'].attrs['net_text']), name\n"
      "    assert width == (d + 1) * 4 + 5 * k + (d + 1) * k, (name, d, k, width)\n";
  expect_script_passes("linear", script, {"linear/adam.h5", "linear/sgld.h5"});
  auto no_hidden = run_credence("compare '" + data_ +
                                "' --target fault_14d --methods adam --hidden none "
                                "--linear-path on --out '" +
                                path("linear_none") + "'");
  EXPECT_EQ(no_hidden.exit_code, 2) << no_hidden.output;
  EXPECT_NE(no_hidden.output.find("--linear-path on needs hidden layers"), std::string::npos)
      << no_hidden.output;
  auto not_a_switch = run_credence("compare '" + data_ +
                                   "' --target fault_14d --methods adam --linear-path yes "
                                   "--out '" +
                                   path("linear_yes") + "'");
  EXPECT_EQ(not_a_switch.exit_code, 2) << not_a_switch.output;
  EXPECT_NE(not_a_switch.output.find("is not on or off"), std::string::npos) << not_a_switch.output;
  EXPECT_FALSE(std::filesystem::exists(path("linear_none/adam.h5")));
}

TEST_F(Compare, ChainSeedKeepsTheSplitAndChangesTheChains) {
  // compare --chain-seed, as train's: the split follows --seed alone, the chains follow
  // the chain seed, and two comparisons on one split merge into one run. Reference: the
  // run files read back with h5py (docs/run-file.md: data/test_rows, samples/theta,
  // settings attributes chain_seed and data_split_seed).
  auto run = [&](const std::string& out, const std::string& seeds) {
    return run_credence("--quiet compare '" + data_ + "' --target fault_14d --id unit_id --impute "
                        "median --methods sgld --epochs 2 --chains 2 --samples 8 --hidden 4 "
                        "--bootstrap 0 --seed 5 " + seeds + " --out '" + path(out) + "'");
  };
  auto first = run("seed_a", "--chain-seed 11");
  ASSERT_EQ(first.exit_code, 0) << first.output;
  auto second = run("seed_b", "--chain-seed 12");
  ASSERT_EQ(second.exit_code, 0) << second.output;
  auto plain = run("seed_c", "");
  ASSERT_EQ(plain.exit_code, 0) << plain.output;
  const std::string script =
      "import sys, h5py, numpy as np\n"
      "a, b, c = (h5py.File(p, 'r') for p in sys.argv[1:4])\n"
      "assert np.array_equal(a['data/test_rows'][:], b['data/test_rows'][:])\n"
      "assert np.array_equal(a['data/train_rows'][:], c['data/train_rows'][:])\n"
      "seeds = [int(f['settings'].attrs['chain_seed']) for f in (a, b, c)]\n"
      "assert seeds == [11, 12, 5], seeds\n"
      "assert all(int(f['settings'].attrs['data_split_seed']) == 5 for f in (a, b, c))\n"
      "assert not np.allclose(a['samples/theta'][:4], b['samples/theta'][:4])\n"
      "print('ok')\n";
  expect_script_passes("chain_seed", script,
                       {"seed_a/sgld.h5", "seed_b/sgld.h5", "seed_c/sgld.h5"});
  auto merged = run_credence("--quiet merge '" + path("seed_a/sgld.h5") + "' '" +
                             path("seed_b/sgld.h5") + "' --out '" + path("merged.h5") + "'");
  EXPECT_EQ(merged.exit_code, 0) << merged.output;
}

TEST_F(Compare, SamplerNotDoneIsReRunLongerWithinItsLimitAndSaysSo) {
  // 20 kept samples cannot reach the ESS target (100 per chain), so the verdict is "NOT
  // done" with an estimate; with the budget sized to the table (no --epochs) compare
  // re-runs the sampler once, longer, within --extend-seconds, and says what it did.
  // Reference: the run file's settings read back with h5py (docs/run-file.md).
  auto compared = run_credence("compare '" + data_ + "' --target fault_14d --id unit_id --impute "
                               "median --methods sgld --chains 2 --samples 20 --hidden 4 "
                               "--bootstrap 0 --extend-seconds 6 --out '" + path("extend") + "'");
  ASSERT_EQ(compared.exit_code, 0) << compared.output;
  EXPECT_NE(compared.output.find("sgld: re-run from the start at "), std::string::npos)
      << compared.output;
  EXPECT_NE(read_text(path("extend/summary.txt")).find("note, sgld: re-run from the start at "),
            std::string::npos);
  // The first run's sized budget: burn-in 2000 then 20 samples at thin 100 (4000 steps).
  // The re-run is at least twice that, burning in for half of it.
  const std::string script =
      "import sys, h5py\n"
      "a = h5py.File(sys.argv[1], 'r')['settings'].attrs\n"
      "steps = int(a['burn_in']) + int(a['thin']) * int(a['samples'])\n"
      "print(dict(a))\n"
      "assert int(a['samples']) == 20 and steps >= 8000 and int(a['burn_in']) >= steps // 2, steps\n";
  expect_script_passes("extend", script, {"extend/sgld.h5"});
  // A budget in passes is kept as given: the flag is refused beside --epochs.
  auto refused = run_credence("compare '" + data_ + "' --target fault_14d --id unit_id --impute "
                              "median --methods sgld --epochs 2 --extend-seconds 4 --out '" +
                              path("extend_refused") + "'");
  EXPECT_EQ(refused.exit_code, 2) << refused.output;
  EXPECT_NE(refused.output.find("--extend-seconds is not read with --epochs"), std::string::npos)
      << refused.output;
}

TEST_F(Compare, SweepMarksDivergenceAndKeepsGoing) {
  // A learning rate of 1e4 on the mean loss blows every chain up (common practice: a
  // step a million times the default); the sweep reports it and still scores the rest.
  auto sweep = run_credence("--quiet sweep '" + data_ +
                            "' --target fault_14d --id unit_id --impute median --methods "
                            "sghmc,sgld --step-sizes 0.003,0.03,10000 --epochs 4 --chains 1 "
                            "--samples 10 --hidden 8 --bootstrap 0 --out '" + path("sweep") + "'");
  ASSERT_EQ(sweep.exit_code, 0) << sweep.output;
  const std::string json = read_text(path("sweep/sweep.json"));
  const std::string script =
      "import json,sys; rows=json.load(open(sys.argv[1])); print(rows); "
      "ok = len(rows) == 6 and all(r['NLL'] is not None for r in rows if r['learning rate'] < 1) "
      "and rows[2]['mixing'] in ('diverged',) ; sys.exit(0 if ok else 1)";
  const std::string log = path("sweep.txt");
  EXPECT_EQ(run_python("-c \"" + script + "\" '" + path("sweep/sweep.json") + "'", log), 0)
      << read_text(log) << "\n" << sweep.output;
  for (const char* name : {"nll.svg", "ece.svg", "report.html", "sweep.csv"}) {
    EXPECT_TRUE(std::filesystem::exists(path("sweep/") + name)) << name;
  }
}

}  // namespace
}  // namespace credence
