// The settings a report lists for one run, in words, and only those its method reads.
#include "report/settings_view.h"

#include <fmt/format.h>

#include <set>

#include "credence/net.h"
#include "credence/posterior.h"
#include "credence/run_settings.h"

namespace credence::report {
namespace {

bool is_relativistic(Method m) {
  return m == Method::kRsghmc || m == Method::kRsgd || m == Method::kRhmc;
}
bool is_santa(Method m) { return m == Method::kSanta || m == Method::kSantaOpt; }

std::string stored_text(const SettingValue& value) {
  if (const auto* text = std::get_if<std::string>(&value)) {
    std::string shown;
    for (char c : *text) shown += c == '\x1f' ? std::string(", ") : std::string(1, c);
    return shown;
  }
  if (const auto* number = std::get_if<double>(&value)) return fmt::format("{:g}", *number);
  return fmt::format("{}", std::get<std::int64_t>(value));
}

std::string delimiter_text(char c) {
  switch (c) {
    case ',': return "comma";
    case ';': return "semicolon";
    case '\t': return "tab";
    case '|': return "vertical bar";
    case ' ': return "space";
    default: return fmt::format("'{}'", c);
  }
}

// "NA", "NaN", "null", "?" and empty cells: each token quoted, the empty one in words.
std::string missing_tokens_text(const std::vector<std::string>& tokens) {
  std::string out;
  bool empty = false;
  for (const std::string& token : tokens) {
    if (token.empty()) {
      empty = true;
      continue;
    }
    out += fmt::format("{}\"{}\"", out.empty() ? "" : ", ", token);
  }
  if (empty) out += out.empty() ? "empty cells" : " and empty cells";
  return out.empty() ? "none (every cell is a value)" : out;
}

std::string count_text(std::int64_t n, std::string_view one, std::string_view many) {
  return fmt::format("{} {}", n, n == 1 ? one : many);
}

using Rows = std::vector<std::pair<std::string, std::string>>;

// The step flags, as method_flags reads them: rsghmc with a derived speed and mass moves
// by --max-move whatever its step (docs/methods.md section 5.4).
void step_rows(const TrainSettings& s, Rows& rows) {
  const SamplerSettings& m = s.sampler;
  const bool derived_move = m.method == Method::kRsghmc && m.relativistic.speed <= 0 &&
                            m.relativistic.mass <= 0;
  if (!derived_move) {
    if (m.step_size > 0) {
      rows.emplace_back("step size", fmt::format("{:g} (--step-size)", m.step_size));
    } else {
      rows.emplace_back("learning rate", fmt::format("{:g} (--lr)", m.learning_rate));
    }
  }
  if (is_relativistic(m.method)) {
    const RelativisticSettings& r = m.relativistic;
    if (r.speed > 0) {
      rows.emplace_back("speed of light", fmt::format("{:g} (--speed)", r.speed));
    } else {
      rows.emplace_back("largest move per step",
                        fmt::format("{:g} (--max-move; --speed replaces it)", r.max_move));
    }
    rows.emplace_back("mass", r.mass > 0 ? fmt::format("{:g} (--mass)", r.mass)
                                         : std::string("derived from the target speed ratio "
                                                       "(no --mass)"));
    if (m.method == Method::kRsghmc) {
      rows.emplace_back("mass adaptation", r.adapt_mass ? "during burn-in (--fixed-mass stops it)"
                                                        : "off (--fixed-mass)");
    }
  }
}

void method_rows(const TrainSettings& s, Rows& rows) {
  const SamplerSettings& m = s.sampler;
  step_rows(s, rows);
  if (is_sampler(m.method)) {
    rows.emplace_back("temperature", fmt::format("{:g} (--temperature)", m.temperature));
    rows.emplace_back("tempering", fmt::format("{} (--tempering)", tempering_name(s.tempering)));
  }
  if (!is_full_batch(m.method) && !is_santa(m.method)) {
    const ScheduleSettings& sc = m.schedule;
    switch (sc.kind) {
      case ScheduleKind::kConstant:
        rows.emplace_back("schedule", "constant step (--schedule)");
        break;
      case ScheduleKind::kPolynomial:
        rows.emplace_back("schedule", fmt::format("polynomial decay, power {:g}, to {:g} of the "
                                                  "first step (--schedule)",
                                                  sc.gamma, sc.end_ratio));
        break;
      case ScheduleKind::kCyclical:
        rows.emplace_back("schedule", fmt::format("cyclical, {} (--schedule, --cycles)",
                                                  count_text(sc.cycles, "cycle", "cycles")));
        break;
    }
  }
  if (m.method == Method::kSghmc || m.method == Method::kMomentum) {
    rows.emplace_back("friction", fmt::format("{:g} (--friction)", m.sghmc.alpha));
  }
  if (m.method == Method::kPsgld) {
    rows.emplace_back("preconditioner", fmt::format("decay {:g}, floor {:g}", m.psgld.rho,
                                                    m.psgld.lambda));
  }
  if (m.method == Method::kAdam) {
    rows.emplace_back("moment decays", fmt::format("{:g} and {:g}, epsilon {:g}", m.adam.beta1,
                                                   m.adam.beta2, m.adam.epsilon));
  }
  if (is_santa(m.method)) {
    rows.emplace_back("santa", fmt::format("sigma {:g}, lambda {:g}, friction {:g}",
                                           m.santa.sigma, m.santa.lambda, m.santa.friction));
  }
  if (m.method == Method::kSanta) {
    rows.emplace_back("thermostat", fmt::format("gain {:g} (--thermostat-gain), alpha at most {:g}",
                                                m.santa.thermostat_gain, m.santa.max_friction));
  }
  if (m.method == Method::kSantaOpt && m.santa.friction == 0) {
    rows.emplace_back("start friction", fmt::format("{:g} (1 - the starting momentum)",
                                                    m.santa.optimizer_start_friction));
  }
  if (m.method == Method::kSantaOpt) {
    rows.emplace_back("exploration", fmt::format("{:g} of the steps (--exploration)",
                                                 m.santa.exploration_fraction));
  }
  if (is_full_batch(m.method)) {
    rows.emplace_back("leapfrog steps", fmt::format("{} (--leapfrog)", m.hmc.leapfrog_steps));
    rows.emplace_back("target acceptance",
                      fmt::format("{:g} (--target-accept)", m.hmc.target_acceptance));
  }
}

// The budget as what it means. An optimizer's run file stores its steps as a burn-in of
// steps - 1 and one kept sample (its final iterate); --epochs is read only without --steps.
void budget_rows(const TrainSettings& s, const RunHeader& h, Rows& rows) {
  const ChainSettings& c = s.chains;
  const auto train = static_cast<std::int64_t>(h.train_rows.size());
  const std::int64_t batch = std::max<std::int64_t>(1, std::min(s.batches.batch_rows, train));
  if (!is_full_batch(s.sampler.method)) {
    rows.emplace_back("batch", fmt::format("{} of {} training rows (--batch)", batch, train));
  }
  if (is_sampler(s.sampler.method)) {
    rows.emplace_back("per chain", fmt::format("burn-in {} steps, then {} kept, one every {} "
                                               "(--burn-in, --samples, --thin)",
                                               c.burn_in, c.samples, c.thin));
    return;
  }
  const std::int64_t steps = c.burn_in + 1;
  const std::int64_t per_pass = train > 0 ? (train + batch - 1) / batch : 1;
  const EarlyStopSettings& e = c.early_stop;
  rows.emplace_back("steps per chain",
                    fmt::format("{}{} ({:.3g} passes over the training rows; --steps, or "
                                "--epochs in passes)",
                                e.every > 0 ? "at most " : "", steps,
                                static_cast<double>(steps) / static_cast<double>(per_pass)));
  rows.emplace_back(
      "early stop",
      e.every > 0
          ? fmt::format("held-out NLL scored every {} steps; a chain ends after {} without a "
                        "fall of {:g}, not before step {}, and keeps its best scored iterate "
                        "(--check-every, --patience, --min-steps)",
                        e.every, count_text(e.patience, "check", "checks"), e.min_improvement,
                        e.min_steps)
          : std::string("off: every step runs and the final iterate is kept (--check-every "
                        "turns it on; --patience, --min-steps)"));
}

}  // namespace

std::string network_words(const RunHeader& header) {
  Result<NetSpec> spec = parse_net_text(header.net_text, "stored net");
  if (!spec.ok()) return "(net text unreadable: " + spec.status().message() + ")";
  std::string text = fmt::format("{} inputs", header.preprocessing.input_width);
  for (const HiddenLayerSpec& layer : spec->hidden) {
    text += fmt::format(" -> {} {}", layer.width, activation_name(layer.activation));
  }
  text += fmt::format(" -> {} classes", header.preprocessing.class_names.size());
  if (spec->linear_path && !spec->hidden.empty()) {
    text += fmt::format(", plus a linear path {} inputs -> {} classes",
                        header.preprocessing.input_width, header.preprocessing.class_names.size());
  }
  return text;
}

std::string method_of(const RunHeader& header) {
  for (const auto& [name, value] : header.settings) {
    if (name != "method") continue;
    if (const auto* text = std::get_if<std::string>(&value)) return *text;
  }
  return "run";
}

std::vector<std::pair<std::string, std::string>> settings_rows(const RunHeader& header) {
  TrainSettings s;
  ReadOptions read;
  Rows rows;
  if (!from_values(header.settings, s, read).ok()) {
    // A file from another version: everything as stored, lists readable.
    for (const auto& [name, value] : header.settings) rows.emplace_back(name, stored_text(value));
    return rows;
  }
  rows.emplace_back("method", std::string(method_name(s.sampler.method)));
  method_rows(s, rows);
  budget_rows(s, header, rows);
  rows.emplace_back("network", fmt::format("{}; {} parameters", network_words(header),
                                           header.parameters));
  rows.emplace_back("CSV delimiter", delimiter_text(read.delimiter));
  rows.emplace_back("missing values", missing_tokens_text(read.na_tokens));
  rows.emplace_back("seeds", fmt::format("chains {}, start {}, summaries {}", s.chains.seed,
                                         s.init_seed, s.summary_seed));
  // Settings written by other parts of train (data, network, positive class) as stored.
  TrainSettings defaults;
  const Settings known = to_values(defaults, DataOptions{});
  std::set<std::string> known_names;
  for (const auto& [name, value] : known) known_names.insert(name);
  for (const auto& [name, value] : header.settings) {
    if (known_names.count(name) == 0) rows.emplace_back(name, stored_text(value));
  }
  return rows;
}

}  // namespace credence::report
