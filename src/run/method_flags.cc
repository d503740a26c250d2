// The table of which method reads which `credence train` flag.
#include "credence/method_flags.h"

#include <fmt/format.h>

#include <string_view>

namespace credence {
namespace {

bool is_relativistic(Method m) {
  return m == Method::kRsghmc || m == Method::kRsgd || m == Method::kRhmc;
}

// What a flag needs, given the method and the other flags.
struct Use {
  Method method;
  ScheduleKind schedule;
  bool net_file;
  const std::set<std::string>& given;
  bool has(std::string_view flag) const { return given.count(std::string(flag)) > 0; }
};

struct FlagRule {
  std::string_view flag;
  bool (*reads)(const Use&);
  // Why the flag is not read, and what is read instead; {m} is the method.
  std::string_view instead;
};

// rsghmc with a derived speed of light and mass (c = max_move / eps, m = u* T / c^2)
// moves every weight by the same amounts whatever eps is: eps cancels from its update
// (docs/methods.md section 5.4), so its step flags matter only with --speed or --mass.
bool step_matters(const Use& u) {
  return u.method != Method::kRsghmc || u.has("--speed") || u.has("--mass");
}

bool is_optimizer(const Use& u) { return !is_sampler(u.method); }

bool is_santa(Method m) { return m == Method::kSanta || m == Method::kSantaOpt; }

constexpr std::string_view kEarlyStopOnly =
    "it stops an optimizer early; {m} is a sampler, whose kept samples all count: leave it "
    "out, or choose sgd, momentum, rsgd, adam or santa-opt";

constexpr FlagRule kRules[] = {
    {"--lr", [](const Use& u) { return step_matters(u) && !u.has("--step-size"); },
     "{m} does not read --lr here: --step-size, when given, replaces it; rsghmc's move per "
     "step comes from --max-move unless --speed or --mass is given"},
    {"--step-size", step_matters,
     "rsghmc does not read --step-size unless --speed or --mass is given: with the derived "
     "speed and mass the step cancels, and each weight's move per step comes from --max-move"},
    {"--temperature", [](const Use& u) { return is_sampler(u.method); },
     "{m} is an optimizer (the T = 0 limit) and reads no temperature; use a sampler (sgld, "
     "psgld, sghmc, rsghmc, santa, hmc, rhmc) for T > 0"},
    {"--tempering", [](const Use& u) { return is_sampler(u.method); },
     "{m} is an optimizer and tempers nothing; --tempering is for the samplers"},
    {"--schedule", [](const Use& u) { return !is_full_batch(u.method) && !is_santa(u.method); },
     "{m} reads no --schedule: hmc and rhmc adapt their step by dual averaging during "
     "burn-in, santa and santa-opt anneal their temperature themselves"},
    {"--exploration", [](const Use& u) { return u.method == Method::kSantaOpt; },
     "--exploration is the share of santa-opt's steps spent in its annealed exploration "
     "stage; {m} does not read it"},
    {"--thermostat-gain", [](const Use& u) { return u.method == Method::kSanta; },
     "--thermostat-gain is the santa sampler's thermostat setting; {m} does not read it"},
    {"--cycles", [](const Use& u) { return u.schedule == ScheduleKind::kCyclical; },
     "--cycles is read only with --schedule cyclical"},
    {"--friction",
     [](const Use& u) { return u.method == Method::kSghmc || u.method == Method::kMomentum; },
     "--friction is sghmc's and momentum's alpha; {m} does not read it (rsghmc and rsgd derive "
     "their friction from --max-move and the mass)"},
    {"--max-move", [](const Use& u) { return is_relativistic(u.method) && !u.has("--speed"); },
     "--max-move sets the speed of light of rsghmc, rsgd and rhmc, and --speed replaces it; "
     "{m} does not read it"},
    {"--speed", [](const Use& u) { return is_relativistic(u.method); },
     "--speed is for rsghmc, rsgd and rhmc; {m} does not read it"},
    {"--mass", [](const Use& u) { return is_relativistic(u.method); },
     "--mass is for rsghmc, rsgd and rhmc; {m} does not read it"},
    {"--fixed-mass", [](const Use& u) { return u.method == Method::kRsghmc; },
     "--fixed-mass stops rsghmc's mass adaptation; {m} adapts no mass"},
    {"--leapfrog", [](const Use& u) { return is_full_batch(u.method); },
     "--leapfrog is for hmc and rhmc; {m} takes one gradient step per step"},
    {"--target-accept", [](const Use& u) { return is_full_batch(u.method); },
     "--target-accept is for hmc and rhmc, which have a Metropolis test; {m} has none"},
    {"--burn-in", [](const Use& u) { return is_sampler(u.method); },
     "{m} is an optimizer and keeps its final iterate; give --steps or --epochs"},
    {"--thin", [](const Use& u) { return is_sampler(u.method); },
     "{m} is an optimizer and keeps its final iterate; give --steps or --epochs"},
    {"--samples", [](const Use& u) { return is_sampler(u.method); },
     "{m} is an optimizer and keeps one final iterate per chain; give --steps or --epochs"},
    {"--steps", [](const Use& u) { return !is_sampler(u.method); },
     "--steps is the optimizers' budget; {m} runs --burn-in + --thin x --samples steps"},
    {"--epochs", [](const Use& u) { return !is_sampler(u.method) && !u.has("--steps"); },
     "{m} does not read --epochs here: it is the optimizers' budget, and --steps replaces it; "
     "a sampler runs --burn-in + --thin x --samples steps"},
    {"--check-every", is_optimizer, kEarlyStopOnly},
    {"--patience", is_optimizer, kEarlyStopOnly},
    {"--min-steps", is_optimizer, kEarlyStopOnly},
    {"--batch", [](const Use& u) { return !is_full_batch(u.method); },
     "{m} uses every training row in each step and reads no --batch"},
    {"--prior-scale", [](const Use& u) { return !u.net_file; },
     "with --net the net file's prior line sets the scale; --prior-scale is for --hidden"},
    {"--linear-path", [](const Use& u) { return !u.net_file; },
     "with --net the net file's linear_path line sets it; --linear-path is for --hidden"},
    {"--activation", [](const Use& u) { return !u.net_file; },
     "with --net the net file's hidden lines set the activations; --activation is for --hidden"},
};

}  // namespace

Status check_method_flags(Method method, ScheduleKind schedule, bool net_file,
                          const std::set<std::string>& given) {
  const Use use{method, schedule, net_file, given};
  for (const FlagRule& rule : kRules) {
    if (!use.has(rule.flag) || rule.reads(use)) continue;
    return Status::invalid_input(
        fmt::format("{} is not read by --method {}: {}", rule.flag, method_name(method),
                    fmt::format(fmt::runtime(rule.instead), fmt::arg("m", method_name(method)))));
  }
  return Status::ok_status();
}

void apply_method_defaults(SamplerSettings& sampler, const std::set<std::string>& given) {
  if (given.count("--lr") == 0) sampler.learning_rate = default_learning_rate(sampler.method);
}

Status check_resume_flags(const std::set<std::string>& given) {
  for (const FlagRule& rule : kRules) {
    if (!given.count(std::string(rule.flag))) continue;
    return Status::invalid_input(fmt::format(
        "{} is not read with --resume: the run continues with the settings stored in its "
        "run file",
        rule.flag));
  }
  for (std::string_view flag : {"--method", "--net", "--hidden", "--chains", "--chain-seed",
                                "--out", "--force"}) {
    if (!given.count(std::string(flag))) continue;
    return Status::invalid_input(fmt::format(
        "{} is not read with --resume: the run continues with the settings stored in its "
        "run file",
        flag));
  }
  return Status::ok_status();
}

}  // namespace credence
