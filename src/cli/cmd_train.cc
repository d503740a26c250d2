// `credence train`: its flags, then run_train() on the request they resolve to.
#include <fmt/format.h>

#include <cstdio>

#include "cli/commands.h"
#include "cli/given_flags.h"
#include "cli/interrupt.h"
#include "cli/memory_option.h"
#include "cli/progress.h"
#include "cli/train_flags.h"
#include "report/verdict_output.h"
#include "credence/held_out.h"

namespace credence::cli {

void add_train_command(CLI::App& app, const GlobalOptions& global, CommandList& commands) {
  auto flags = std::make_shared<TrainFlags>();
  TrainRequest& r = flags->request;
  TrainSettings& s = r.settings;
  CLI::App* sub = app.add_subcommand(
      "train", "Fit preprocessing, split, run chains (or an optimizer), write the run file");
  sub->add_option("data", r.data_path, "The labelled table (CSV with a header row)");
  add_data_options(*sub, flags->data);
  sub->add_option("--out", r.out_path, "Run file to write (HDF5)");
  sub->add_flag("--force", r.force, "Overwrite an existing run file");
  sub->add_option("--resume", r.resume_path,
                  "Continue an interrupted run in this file (settings come from the file)");

  auto* net = sub->add_option_group("network");
  net->add_option("--net", r.net_path, "Net file (see nets/README.md)");
  net->add_option("--hidden", flags->hidden, "Hidden layer widths, e.g. 64,64 ('none': no hidden layer) [32,32]");
  net->add_option("--activation", r.activation, "relu, tanh, sigmoid, softplus or identity")
      ->capture_default_str();
  net->add_option("--linear-path", flags->linear_path,
                  "on: a linear map from the inputs to the logits beside the hidden layers, with "
                  "prior blocks of its own (docs/prior.md, 'The linear path'); off: the hidden "
                  "layers only")
      ->capture_default_str();
  net->add_option("--prior-scale", flags->prior_scale,
                  "auto: each layer's weights and biases learn their prior precision (Gamma "
                  "hyperprior, Gibbs updates in samplers, evidence updates in optimizers); or a fixed "
                  "weight scale s (sd s/sqrt(fan-in)); with --hidden only (docs/prior.md)")
      ->capture_default_str();

  auto* method = sub->add_option_group("method");
  method->add_option("--method", flags->method,
                     "sgld, psgld, sghmc, rsghmc, sgd, momentum, rsgd, adam, hmc, rhmc, santa or "
                     "santa-opt")
      ->capture_default_str();
  method->add_option("--lr", s.sampler.learning_rate,
                     "Learning rate on the mean loss (converted to the method's step; rsghmc "
                     "reads it only with --speed or --mass: its move comes from --max-move; "
                     "sgld: default 0.01 x sqrt(training rows), from 0.1 to 0.3; sghmc: "
                     "default 0.001 x sqrt(training rows), from 0.01 to 0.1; psgld: default 0.003; santa, "
                     "santa-opt: default 0.001)")
      ->capture_default_str();
  method->add_option("--step-size", s.sampler.step_size,
                     "Step size in potential units, instead of --lr (rsghmc: only with --speed "
                     "or --mass)");
  method->add_option("--temperature", s.sampler.temperature,
                     "Samplers: T, 1 = Bayes posterior, < 1 cold")
      ->capture_default_str();
  method->add_option("--tempering", flags->tempering,
                     "Samplers: what T tempers, posterior (prior and likelihood) or likelihood")
      ->capture_default_str();
  method->add_option("--schedule", flags->schedule,
                     "constant, cyclical, or polynomial (optimizers only); not hmc/rhmc/santa/santa-opt")
      ->capture_default_str();
  method->add_option("--cycles", s.sampler.schedule.cycles, "--schedule cyclical: number of cycles")
      ->capture_default_str();
  method->add_option("--friction", s.sampler.sghmc.alpha,
                     "sghmc/momentum: friction alpha (momentum 1 - alpha)")
      ->capture_default_str();
  method->add_option("--max-move", s.sampler.relativistic.max_move,
                     "rsghmc/rsgd/rhmc: largest move of one weight per step (sets c; rhmc: "
                     "at the first step size, which burn-in then adapts) "
                     "[default: 0.01; rsghmc: min(0.01, 2 sqrt(lr / training rows)), lr being "
                     "sghmc's sized default, so the moves shrink with the posterior's width]");
  method->add_option("--speed", s.sampler.relativistic.speed,
                     "rsghmc/rsgd/rhmc: speed of light c (overrides --max-move)");
  method->add_option("--mass", s.sampler.relativistic.mass,
                     "rsghmc/rsgd/rhmc: rest mass m (0: derived from the target speed)");
  method->add_flag("--fixed-mass", flags->fixed_mass, "rsghmc: do not adapt m during burn-in");
  method->add_option("--exploration", s.sampler.santa.exploration_fraction,
                     "santa-opt: share of the steps in the annealed exploration stage (the rest "
                     "refine without noise)")
      ->capture_default_str();
  method->add_option("--thermostat-gain", s.sampler.santa.thermostat_gain,
                     "santa: relative gain of the thermostat (0: the method's published "
                     "thermostat alone, which falls behind minibatch noise on large tables; "
                     "docs/methods.md section 16)")
      ->capture_default_str();
  method->add_option("--leapfrog", s.sampler.hmc.leapfrog_steps, "hmc/rhmc: leapfrog steps")
      ->capture_default_str();
  method->add_option("--target-accept", s.sampler.hmc.target_acceptance,
                     "hmc/rhmc: acceptance rate the step size adapts to")
      ->capture_default_str();

  auto* chains = sub->add_option_group("chains");
  chains->add_option("--chains", s.chains.chains, "Independent chains, run in parallel")
      ->capture_default_str();
  using D = BudgetDefaults;
  flags->burn_in = chains->add_option(
      "--burn-in", s.chains.burn_in,
      fmt::format("Samplers: steps before the first kept sample [default: max(F steps, {:g} "
                  "passes over the training rows), at most {}, where the floor F is {} steps up "
                  "to {} training rows, falling as 1/rows to {} (at {} rows): long enough to "
                  "forget the start on small and large tables; hmc, rhmc: {} iterations]",
                  D::kSamplerBurnInPasses, D::kSamplerPhaseCap, D::kSamplerSmallTableFloor,
                  D::kSamplerSmallTableRows, D::kSamplerBurnInFloor,
                  D::kSamplerSmallTableRows * D::kSamplerSmallTableFloor / D::kSamplerBurnInFloor,
                  D::kFullBatchBurnIn));
  flags->thin = chains->add_option(
      "--thin", s.chains.thin,
      fmt::format("Samplers: keep every N-th step after burn-in [default: the sampling phase "
                  "max(F steps, {:g} passes), F as for --burn-in, at most {}, divided by "
                  "--samples, and at least {}; hmc, rhmc: {} iterations divided by --samples]",
                  D::kSamplerSamplingPasses, D::kSamplerPhaseCap, D::kSamplerThinFloor,
                  D::kFullBatchSampling));
  flags->samples = chains->add_option("--samples", s.chains.samples, "Samplers: kept samples per chain")
                       ->capture_default_str();
  chains->add_option("--batch", s.batches.batch_rows,
                     "Minibatch rows (not hmc/rhmc, which use every row)")
      ->capture_default_str();
  flags->steps = chains->add_option(
      "--steps", s.steps,
      fmt::format("Optimizers: most steps per chain [default: max({} steps, {:g} passes), at "
                  "most {}: enough for adam to settle on 100 rows and several passes over "
                  "1,000,000]",
                  D::kOptimizerFloor, D::kOptimizerPasses, D::kOptimizerCap));
  flags->epochs = chains->add_option(
      "--epochs", s.epochs, "Optimizers: passes over the training rows instead of --steps");
  using E = EarlyStopDefaults;
  flags->check_every = chains->add_option(
      "--check-every", s.chains.early_stop.every,
      fmt::format("Optimizers: score the validation rows (NLL, up to {}) every N steps, keep "
                  "the best iterate [default: one pass, between {} and {} steps]",
                  kHeldOutRowsMax, E::kEveryMin, E::kEveryMax));
  flags->patience = chains->add_option(
      "--patience", s.chains.early_stop.patience,
      fmt::format("Optimizers: stop after N checks without a gain of {:g} in validation NLL "
                  "(0: run the whole budget, keep the last iterate) [default: {} checks, or "
                  "as many as span {} steps if more: the prior's evidence updates can raise "
                  "the validation NLL for a while]",
                  EarlyStopSettings{}.min_improvement, E::kPatience, E::kPatienceSteps));
  flags->min_steps = chains->add_option(
      "--min-steps", s.chains.early_stop.min_steps,
      fmt::format("Optimizers: never stop early before N steps [default: max({} steps, {:g} "
                  "passes), at most the budget]",
                  E::kMinStepsFloor, E::kMinStepsPasses));
  chains->add_option("--chain-seed", flags->chain_seed,
                     "Seed of the chains (starting points, minibatch order, noise), apart from "
                     "the split's --seed; default: --seed. Runs with one --seed and different "
                     "chain seeds can be merged");
  chains->add_option("--threads", s.chains.threads, "Threads for chains (0: one per core)")
      ->capture_default_str();
  add_max_memory_option(*sub, r.max_memory);
  chains->add_option("--flush-seconds", s.flush_seconds,
                     "Longest time a kept sample waits before reaching the disk")
      ->capture_default_str();

  commands.push_back({sub, [flags, sub, &global] {
                        flags->given = given_flags(*sub);
                        CREDENCE_RETURN_IF_ERROR(resolve_train_flags(*flags));
                        flags->request.command_line = global.command_line;
                        flags->request.hooks.stop = &install_interrupt_handlers();
                        flags->request.hooks.progress = progress_line(global.quiet);
                        std::optional<RunVerdict> verdict;
                        flags->request.verdict = &verdict;
                        Status status = run_train(flags->request);
                        if (verdict) std::fputs(verdict_text(*verdict).c_str(), stdout);
                        return status;
                      }});
}

}  // namespace credence::cli
