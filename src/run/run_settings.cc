// One list of setting fields, walked in both directions: to the run file and back.
#include "credence/run_settings.h"

#include <fmt/format.h>

#include <cmath>
#include <string_view>
#include <type_traits>

namespace credence {
namespace {

// Calls visit(name, field) for every setting. The one place that names them, so
// writing and reading can never disagree.
template <typename Visit>
void visit_settings(TrainSettings& s, ReadOptions& read, Visit&& visit) {
  SamplerSettings& m = s.sampler;
  visit("method", m.method);
  visit("step_size", m.step_size);
  visit("learning_rate", m.learning_rate);
  visit("temperature", m.temperature);
  visit("tempering", s.tempering);
  visit("schedule", m.schedule.kind);
  visit("schedule_gamma", m.schedule.gamma);
  visit("schedule_end_ratio", m.schedule.end_ratio);
  visit("schedule_cycles", m.schedule.cycles);
  visit("schedule_exploration_fraction", m.schedule.exploration_fraction);
  visit("psgld_rho", m.psgld.rho);
  visit("psgld_lambda", m.psgld.lambda);
  visit("psgld_max_preconditioner_ratio", m.psgld.max_preconditioner_ratio);
  visit("psgld_freeze_after_burn_in", m.psgld.freeze_after_burn_in);
  visit("psgld_gamma_correction", m.psgld.gamma_correction);
  visit("psgld_adapt_without_prior", m.psgld.adapt_without_prior);
  visit("psgld_shrink_on_revival", m.psgld.shrink_on_revival);
  visit("sghmc_alpha", m.sghmc.alpha);
  visit("sghmc_correct_gradient_noise", m.sghmc.correct_gradient_noise);
  visit("sghmc_resample_every", m.sghmc.resample_every);
  visit("relativistic_speed", m.relativistic.speed);
  visit("relativistic_max_move", m.relativistic.max_move);
  visit("relativistic_mass", m.relativistic.mass);
  visit("relativistic_joint", m.relativistic.joint);
  visit("relativistic_friction", m.relativistic.friction);
  visit("relativistic_alpha", m.relativistic.alpha);
  visit("relativistic_adapt_mass", m.relativistic.adapt_mass);
  visit("relativistic_target_speed_ratio", m.relativistic.target_speed_ratio);
  visit("relativistic_adapt_window", m.relativistic.adapt_window);
  visit("relativistic_correct_gradient_noise", m.relativistic.correct_gradient_noise);
  visit("relativistic_refresh_sweeps", m.relativistic.refresh_sweeps);
  visit("adam_beta1", m.adam.beta1);
  visit("adam_beta2", m.adam.beta2);
  visit("adam_epsilon", m.adam.epsilon);
  visit("santa_sigma", m.santa.sigma);
  visit("santa_lambda", m.santa.lambda);
  visit("santa_friction", m.santa.friction);
  visit("santa_optimizer_start_friction", m.santa.optimizer_start_friction);
  visit("santa_thermostat_gain", m.santa.thermostat_gain);
  visit("santa_max_friction", m.santa.max_friction);
  visit("santa_max_preconditioner_ratio", m.santa.max_preconditioner_ratio);
  visit("santa_anneal_scale", m.santa.anneal_scale);
  visit("santa_anneal_offset", m.santa.anneal_offset);
  visit("santa_anneal_power", m.santa.anneal_power);
  visit("santa_exploration_fraction", m.santa.exploration_fraction);
  visit("hmc_leapfrog_steps", m.hmc.leapfrog_steps);
  visit("hmc_adapt_step", m.hmc.adapt_step);
  visit("hmc_target_acceptance", m.hmc.target_acceptance);
  visit("hmc_jitter", m.hmc.jitter);
  visit("hmc_mass", m.hmc.mass);
  visit("chains", s.chains.chains);
  visit("burn_in", s.chains.burn_in);
  visit("thin", s.chains.thin);
  visit("samples", s.chains.samples);
  visit("chain_seed", s.chains.seed);
  visit("summary_seed", s.summary_seed);
  visit("max_potential", s.chains.max_potential);
  visit("trace_every", s.chains.trace_every);
  visit("early_stop_every", s.chains.early_stop.every);
  visit("early_stop_patience", s.chains.early_stop.patience);
  visit("early_stop_min_steps", s.chains.early_stop.min_steps);
  visit("early_stop_min_improvement", s.chains.early_stop.min_improvement);
  visit("batch_rows", s.batches.batch_rows);
  visit("drop_last", s.batches.drop_last);
  visit("optimizer_steps", s.steps);
  visit("optimizer_epochs", s.epochs);
  visit("probe_rows", s.probe_rows);
  visit("projections", s.projections);
  visit("init_seed", s.init_seed);
  visit("flush_seconds", s.flush_seconds);
  visit("csv_delimiter", read.delimiter);
  visit("csv_na_tokens", read.na_tokens);
}

// Enums travel as their names, so a Python reader sees "sgld", not 0.
std::string enum_text(Method v) { return std::string(method_name(v)); }
std::string enum_text(Tempering v) { return std::string(tempering_name(v)); }
std::string enum_text(ScheduleKind v) {
  switch (v) {
    case ScheduleKind::kConstant: return "constant";
    case ScheduleKind::kPolynomial: return "polynomial";
    case ScheduleKind::kCyclical: return "cyclical";
  }
  return "constant";
}
Status enum_parse(const std::string& text, Method& v) {
  Result<Method> r = parse_method(text);
  if (!r.ok()) return r.status();
  v = *r;
  return Status::ok_status();
}
Status enum_parse(const std::string& text, Tempering& v) {
  Result<Tempering> r = parse_tempering(text);
  if (!r.ok()) return r.status();
  v = *r;
  return Status::ok_status();
}
Status enum_parse(const std::string& text, ScheduleKind& v) {
  for (ScheduleKind k : {ScheduleKind::kConstant, ScheduleKind::kPolynomial, ScheduleKind::kCyclical}) {
    if (enum_text(k) == text) {
      v = k;
      return Status::ok_status();
    }
  }
  return Status::invalid_input("unknown schedule '" + text + "'; use constant, polynomial or cyclical");
}

template <typename T>
constexpr bool kIsEnum = std::is_enum_v<T>;

// Missing-value tokens as one string: joined by the ASCII unit separator, which
// cannot appear in a CSV cell that means "missing".
constexpr char kListSeparator = '\x1f';

SettingValue to_value(const auto& field) {
  using T = std::decay_t<decltype(field)>;
  if constexpr (kIsEnum<T>) {
    return enum_text(field);
  } else if constexpr (std::is_same_v<T, bool>) {
    return std::int64_t{field ? 1 : 0};
  } else if constexpr (std::is_same_v<T, char>) {
    return std::string(1, field);
  } else if constexpr (std::is_same_v<T, std::vector<std::string>>) {
    std::string joined;
    for (std::size_t i = 0; i < field.size(); ++i) {
      if (i) joined += kListSeparator;
      joined += field[i];
    }
    return joined;
  } else if constexpr (std::is_floating_point_v<T>) {
    return static_cast<double>(field);
  } else {
    static_assert(std::is_integral_v<T>, "a setting is an enum, bool, number or string list");
    return static_cast<std::int64_t>(field);
  }
}

template <typename T>
Status from_value(const SettingValue& value, const std::string& name, T& field) {
  auto mistyped = [&](const char* expected) {
    return Status::corrupt(fmt::format("setting '{}' in the run file is not {}", name, expected));
  };
  if constexpr (kIsEnum<T>) {
    if (!std::holds_alternative<std::string>(value)) return mistyped("a name");
    return enum_parse(std::get<std::string>(value), field);
  } else if constexpr (std::is_same_v<T, char>) {
    if (!std::holds_alternative<std::string>(value) || std::get<std::string>(value).size() != 1) {
      return mistyped("one character");
    }
    field = std::get<std::string>(value)[0];
  } else if constexpr (std::is_same_v<T, std::vector<std::string>>) {
    if (!std::holds_alternative<std::string>(value)) return mistyped("text");
    field.clear();
    const std::string& joined = std::get<std::string>(value);
    std::size_t start = 0;
    for (std::size_t i = 0; i <= joined.size(); ++i) {
      if (i == joined.size() || joined[i] == kListSeparator) {
        field.push_back(joined.substr(start, i - start));
        start = i + 1;
      }
    }
  } else if constexpr (std::is_floating_point_v<T>) {
    if (!std::holds_alternative<double>(value)) return mistyped("a number");
    field = static_cast<T>(std::get<double>(value));
  } else {
    if (!std::holds_alternative<std::int64_t>(value)) return mistyped("an integer");
    field = static_cast<T>(std::get<std::int64_t>(value));
  }
  return Status::ok_status();
}

}  // namespace

Status validate_train_settings(const TrainSettings& s) {
  auto refuse = [](std::string_view flag, auto value, std::string_view need) {
    return Status::invalid_input(fmt::format("{} {} is out of range; give {}", flag, value, need));
  };
  if (s.chains.chains < 1 || s.chains.chains > 4096) return refuse("--chains", s.chains.chains, "1 to 4096");
  if (s.chains.burn_in < 0) return refuse("--burn-in", s.chains.burn_in, "0 or more steps");
  if (s.chains.thin < 1) return refuse("--thin", s.chains.thin, "1 or more");
  if (s.chains.samples < 1) return refuse("--samples", s.chains.samples, "1 or more kept samples per chain");
  if (s.chains.threads < 0) return refuse("--threads", s.chains.threads, "0 (one per core) or more");
  if (s.batches.batch_rows < 1) return refuse("--batch", s.batches.batch_rows, "1 or more rows");
  if (s.steps < 0) return refuse("--steps", s.steps, "0 (derive from --epochs) or more");
  if (!(s.epochs > 0)) return refuse("--epochs", s.epochs, "a positive number of passes");
  const EarlyStopSettings& e = s.chains.early_stop;
  if (e.every < 0) return refuse("--check-every", e.every, "0 (off) or more steps");
  if (e.patience < 0) return refuse("--patience", e.patience, "0 (no early stopping) or more checks");
  if (e.min_steps < 0) return refuse("--min-steps", e.min_steps, "0 or more steps");
  if (!(s.flush_seconds > 0)) return refuse("--flush-seconds", s.flush_seconds, "a positive time");
  // The sampler library checks these too, but under its own setting names; refuse them here
  // first so the message names the flag the user typed.
  const SamplerSettings& m = s.sampler;
  const auto finite_at_least = [](double v, double low) { return std::isfinite(v) && v >= low; };
  if (!finite_at_least(m.step_size, 0)) {
    return refuse("--step-size", m.step_size, "0 (derive it from --lr) or a positive step");
  }
  if (m.step_size == 0 && !(std::isfinite(m.learning_rate) && m.learning_rate > 0)) {
    return refuse("--lr", m.learning_rate, "a positive learning rate such as 0.01");
  }
  if (!finite_at_least(m.temperature, 0)) {
    return refuse("--temperature", m.temperature, "0 (optimizer limit) or more; 1 is the posterior");
  }
  if (m.schedule.cycles < 1) return refuse("--cycles", m.schedule.cycles, "1 or more");
  if (is_sampler(m.method) && m.schedule.kind == ScheduleKind::kPolynomial) {
    return Status::invalid_input(fmt::format(
        "--schedule polynomial is for the optimizers (sgd, momentum, rsgd, adam); {} keeps "
        "samples, which a decaying step would have to weight by their step size, and the "
        "run file keeps equal weights. Use --schedule constant or cyclical",
        method_name(m.method)));
  }
  if (!(m.sghmc.alpha > 0 && m.sghmc.alpha <= 1)) {
    return refuse("--friction", m.sghmc.alpha, "a value in (0, 1], such as 0.1");
  }
  const RelativisticSettings& rel = m.relativistic;
  if (!(std::isfinite(rel.max_move) && rel.max_move > 0)) {
    return refuse("--max-move", rel.max_move, "a positive largest move per step, such as 0.01");
  }
  if (!finite_at_least(rel.speed, 0)) return refuse("--speed", rel.speed, "0 (from --max-move) or more");
  if (!finite_at_least(rel.mass, 0)) return refuse("--mass", rel.mass, "0 (derived) or more");
  if (m.hmc.leapfrog_steps < 1) return refuse("--leapfrog", m.hmc.leapfrog_steps, "1 or more steps");
  if (!(m.santa.exploration_fraction >= 0 && m.santa.exploration_fraction <= 1)) {
    return refuse("--exploration", m.santa.exploration_fraction, "a share of the steps in [0, 1], such as 0.5");
  }
  if (!finite_at_least(m.santa.thermostat_gain, 0)) {
    return refuse("--thermostat-gain", m.santa.thermostat_gain,
                  "0 (the published thermostat alone) or more, such as 0.05");
  }
  if (!(m.hmc.target_acceptance > 0 && m.hmc.target_acceptance < 1)) {
    return refuse("--target-accept", m.hmc.target_acceptance, "a rate in (0, 1), such as 0.8");
  }
  return Status::ok_status();
}

Settings to_values(const TrainSettings& settings, const DataOptions& data) {
  // visit_settings needs mutable references; work on copies.
  TrainSettings s = settings;
  ReadOptions read = data.read;
  Settings values;
  visit_settings(s, read, [&](const char* name, auto& field) {
    values.emplace_back(name, to_value(field));
  });
  // Data flags are recorded for provenance only; resume uses the stored split and
  // preprocessing.
  values.emplace_back("data_target", data.schema.target);
  // Read by resolve_positive_class; absent means the default (the class sorting second).
  if (!data.schema.positive_class.empty()) {
    values.emplace_back("positive_class", data.schema.positive_class);
  }
  values.emplace_back("data_split_seed", static_cast<std::int64_t>(data.split.seed));
  values.emplace_back("data_test_fraction", data.split.test_fraction);
  values.emplace_back("data_val_fraction", data.split.val_fraction);
  return values;
}

Status from_values(const Settings& values, TrainSettings& settings, ReadOptions& read) {
  Status status;
  visit_settings(settings, read, [&](const char* name, auto& field) {
    if (!status.ok()) return;
    // Run files written before the chains had a seed of their own stored one "seed",
    // which seeded both the chains and the tracked summaries.
    const bool renamed =
        std::string_view(name) == "chain_seed" || std::string_view(name) == "summary_seed";
    for (const char* wanted : {name, renamed ? "seed" : name}) {
      for (const auto& [key, value] : values) {
        if (key == wanted) {
          status = from_value(value, key, field);
          return;
        }
      }
    }
    // Run files written before optimizers stopped early have no early_stop_* settings:
    // they ran without it, which the defaults (every = 0: off) reproduce on resume.
    if (std::string_view(name).starts_with("early_stop_")) return;
    // Run files written before santa existed have no santa_* settings; they are never
    // santa runs, and the defaults leave them unchanged.
    if (std::string_view(name).starts_with("santa_")) return;
    // Run files written before psgld adapted without the prior's term adapted with it,
    // and those written before its frozen G followed a revived unit kept G fixed.
    if (std::string_view(name) == "psgld_adapt_without_prior" ||
        std::string_view(name) == "psgld_shrink_on_revival") {
      if constexpr (std::is_same_v<std::decay_t<decltype(field)>, bool>) field = false;
      return;
    }
    status = Status::corrupt(fmt::format("the run file has no setting '{}'", name));
  });
  return status;
}

}  // namespace credence
