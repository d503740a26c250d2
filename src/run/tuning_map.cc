// The relativistic samplers' tuning map: the grid, each cell's measures, the chosen cell,
// and the map as CSV and JSON.
#include "credence/tuning_map.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <limits>
#include <sstream>

#include "util/json.h"

namespace credence {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string csv_number(double v) { return std::isfinite(v) ? fmt::format("{:.6g}", v) : ""; }

}  // namespace

std::string_view tuning_axis_name(TuningAxis axis) {
  return axis == TuningAxis::kMaxMove ? "max_move" : "learning_rate";
}

std::string_view tuning_choice_rule() {
  return "the highest bulk-ESS of the probe log-likelihood per 1000 gradient evaluations "
         "among cells where no chain diverged and whose test NLL is within 0.01 nats of the "
         "best such cell's (ties: the lower test NLL)";
}

Result<std::vector<double>> parse_positive_values(const std::string& text, std::string_view flag) {
  const auto bad = [&] {
    return Status::invalid_input(fmt::format(
        "{} '{}': give positive numbers like 0.1,1,10 or a log range FROM:TO:COUNT like "
        "0.1:10:5",
        flag, text));
  };
  std::vector<double> out;
  if (text.find(':') != std::string::npos) {
    double from = 0, to = 0;
    long count = 0;
    char c1 = 0, c2 = 0;
    std::istringstream in(text);
    if (!(in >> from >> c1 >> to >> c2 >> count) || c1 != ':' || c2 != ':' || !(from > 0) ||
        !(to > from) || !std::isfinite(to) || count < 2 || count > 50 || !in.eof()) {
      return bad();
    }
    for (long i = 0; i < count; ++i) {
      out.push_back(from * std::pow(to / from, static_cast<double>(i) / static_cast<double>(count - 1)));
    }
    return out;
  }
  std::stringstream stream(text);
  for (std::string piece; std::getline(stream, piece, ',');) {
    char* end = nullptr;
    const double v = std::strtod(piece.c_str(), &end);
    if (piece.empty() || *end != '\0' || !(v > 0) || !std::isfinite(v)) return bad();
    out.push_back(v);
  }
  if (out.empty() || (!text.empty() && text.back() == ',')) return bad();
  return out;
}

namespace {

// Cells are named by their values at 4 significant digits (run files, labels, heat-map
// ticks), so two values alike at that precision would overwrite each other's run file.
Status refuse_lookalikes(const std::vector<double>& values, std::string_view flag) {
  for (std::size_t i = 0; i < values.size(); ++i) {
    for (std::size_t j = 0; j < i; ++j) {
      if (fmt::format("{:.4g}", values[i]) == fmt::format("{:.4g}", values[j])) {
        return Status::invalid_input(fmt::format(
            "{}: {} and {} are the same to 4 significant digits, which name the map's cells "
            "and run files; give each value once",
            flag, values[j], values[i]));
      }
    }
  }
  return Status::ok_status();
}

}  // namespace

Result<TuningGrid> parse_tuning_grid(const std::string& masses_text,
                                     const std::string& max_moves_text,
                                     const std::string& step_sizes_text,
                                     const std::vector<Method>& methods) {
  for (Method m : methods) {
    if (m == Method::kRsghmc || m == Method::kRhmc) continue;
    const std::string name(method_name(m));
    if (m == Method::kHmc) {
      return Status::invalid_input(
          "--methods: --masses and --max-moves map the rest mass and speed of light of rsghmc "
          "and rhmc; hmc reads neither: give --methods rhmc (hmc's full-data steps are not "
          "swept: train it on its own with credence train)");
    }
    if (m == Method::kRsgd) {
      return Status::invalid_input(
          "--methods: the map measures sampling (ESS, |v|/c) and rsgd is an optimizer; give "
          "--methods rsghmc or rhmc, or sweep rsgd over --step-sizes alone");
    }
    return Status::invalid_input(fmt::format(
        "--methods: --masses and --max-moves map the rest mass and speed of light of rsghmc "
        "and rhmc; {} reads neither: give --methods rsghmc or rhmc, or sweep {} over "
        "--step-sizes alone",
        name, name));
  }
  if (methods.empty()) return Status::invalid_input("--methods: give rsghmc or rhmc to map");
  if (masses_text.empty()) {
    return Status::invalid_input(
        "--max-moves maps against the rest mass: give --masses too (e.g. --masses 0.1,1,10)");
  }
  if (!max_moves_text.empty() && !step_sizes_text.empty()) {
    return Status::invalid_input(
        "a map has two axes: --masses against --max-moves or against --step-sizes, not both");
  }
  TuningGrid grid;
  grid.methods = methods;
  Result<std::vector<double>> masses = parse_positive_values(masses_text, "--masses");
  if (!masses.ok()) return masses.status();
  CREDENCE_RETURN_IF_ERROR(refuse_lookalikes(*masses, "--masses"));
  grid.masses = std::move(*masses);
  grid.axis = step_sizes_text.empty() ? TuningAxis::kMaxMove : TuningAxis::kStepSize;
  const std::string& second = step_sizes_text.empty() ? max_moves_text : step_sizes_text;
  if (second.empty()) {
    return Status::invalid_input(
        "--masses needs a second axis: --max-moves (e.g. 0.003,0.01,0.03) or --step-sizes");
  }
  Result<std::vector<double>> values = parse_positive_values(
      second, grid.axis == TuningAxis::kMaxMove ? "--max-moves" : "--step-sizes");
  if (!values.ok()) return values.status();
  CREDENCE_RETURN_IF_ERROR(refuse_lookalikes(
      *values, grid.axis == TuningAxis::kMaxMove ? "--max-moves" : "--step-sizes"));
  grid.values = std::move(*values);
  return grid;
}

TuningMeasures tuning_measures(const std::optional<RunDiagnostics>& diagnostics, double test_nll,
                               const std::vector<ChainStatus>& chain_status,
                               double gradients_per_pass) {
  TuningMeasures m;
  m.ess_per_1000_grads = m.ess_bulk = m.gradient_evals = m.speed_ratio = kNaN;
  m.passes = m.ess_per_1000_passes = m.acceptance = m.divergent_trajectories = kNaN;
  m.test_nll = test_nll;
  m.chains = static_cast<int>(chain_status.size());
  for (ChainStatus s : chain_status) m.diverged_chains += s == ChainStatus::kDiverged;
  if (!diagnostics) return m;
  for (const SummaryDiagnostics& s : diagnostics->summaries) {
    if (s.group != SummaryGroup::kProbeLogLik) continue;
    m.ess_bulk = s.stats.ess_bulk;
    m.ess_per_1000_grads = s.ess_per_1000_grads;
    // diagnose_run divides by the gradients summed over chains; recover that sum.
    if (std::isfinite(s.ess_per_1000_grads) && s.ess_per_1000_grads > 0) {
      m.gradient_evals = std::round(1000 * s.stats.ess_bulk / s.ess_per_1000_grads);
    }
  }
  double sum = 0;
  int count = 0;
  for (double r : diagnostics->speed_ratio_per_chain) {
    if (!std::isnan(r)) sum += r, ++count;
  }
  if (count > 0) m.speed_ratio = sum / count;
  sum = 0;
  count = 0;
  for (double a : diagnostics->acceptance_per_chain) {
    if (!std::isnan(a)) sum += a, ++count;
  }
  if (count > 0) m.acceptance = sum / count;
  if (gradients_per_pass > 0 && std::isfinite(m.gradient_evals) && m.gradient_evals > 0) {
    m.passes = m.gradient_evals / gradients_per_pass;
    m.ess_per_1000_passes = 1000 * m.ess_bulk / m.passes;
  }
  return m;
}

std::optional<std::size_t> choose_tuning_cell(const std::vector<TuningCell>& cells, Method method) {
  const auto eligible = [&](const TuningCell& c) {
    return c.method == method && c.trained && c.measures.diverged_chains == 0 &&
           std::isfinite(c.measures.ess_per_1000_grads) && std::isfinite(c.measures.test_nll);
  };
  double best_nll = std::numeric_limits<double>::infinity();
  for (const TuningCell& c : cells) {
    if (eligible(c)) best_nll = std::min(best_nll, c.measures.test_nll);
  }
  std::optional<std::size_t> best;
  for (std::size_t i = 0; i < cells.size(); ++i) {
    const TuningMeasures& m = cells[i].measures;
    // A fast cell whose ensemble predicts worse has not settled: mixing speed counts only
    // among cells that predict about as well as the best one.
    if (!eligible(cells[i]) || m.test_nll > best_nll + kTuningNllSlack) continue;
    if (!best) {
      best = i;
      continue;
    }
    const TuningMeasures& b = cells[*best].measures;
    if (m.ess_per_1000_grads > b.ess_per_1000_grads ||
        (m.ess_per_1000_grads == b.ess_per_1000_grads && m.test_nll < b.test_nll)) {
      best = i;
    }
  }
  return best;
}

std::string tuning_map_csv(const std::vector<TuningCell>& cells, TuningAxis axis) {
  std::string out = fmt::format(
      "method,mass,{},trained,chosen,ess_bulk,gradient_evals,ess_per_1000_grads,speed_ratio,"
      "test_nll,diverged_chains,chains,run_file,passes,ess_per_1000_passes,acceptance,"
      "divergent_trajectories\n",
      tuning_axis_name(axis));
  for (std::size_t i = 0; i < cells.size(); ++i) {
    const TuningCell& c = cells[i];
    const TuningMeasures& m = c.measures;
    const bool chosen = choose_tuning_cell(cells, c.method) == i;
    out += fmt::format("{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{}\n", method_name(c.method),
                       csv_number(c.mass), csv_number(c.value), c.trained ? 1 : 0, chosen ? 1 : 0,
                       csv_number(m.ess_bulk), csv_number(m.gradient_evals),
                       csv_number(m.ess_per_1000_grads), csv_number(m.speed_ratio),
                       csv_number(m.test_nll), m.diverged_chains, m.chains, c.run_file,
                       csv_number(m.passes), csv_number(m.ess_per_1000_passes),
                       csv_number(m.acceptance), csv_number(m.divergent_trajectories));
  }
  return out;
}

std::string tuning_map_json(const std::vector<TuningCell>& cells, TuningAxis axis) {
  std::string out = fmt::format(
      "{{\n  \"axis\": {},\n  \"choice_rule\": {},\n  \"cautions\": {},\n  \"cells\": [",
      json_string(tuning_axis_name(axis)), json_string(tuning_choice_rule()),
      json_string("measured on one table, one split and one seed: re-check the chosen cell on "
                  "your own data before relying on it"));
  for (std::size_t i = 0; i < cells.size(); ++i) {
    const TuningCell& c = cells[i];
    const TuningMeasures& m = c.measures;
    const bool chosen = choose_tuning_cell(cells, c.method) == i;
    out += fmt::format(
        "{}\n    {{\"method\": {}, \"mass\": {}, {}: {}, \"trained\": {}, \"chosen\": {}, "
        "\"ess_bulk\": {}, \"gradient_evals\": {}, \"ess_per_1000_grads\": {}, "
        "\"speed_ratio\": {}, \"test_nll\": {}, \"diverged_chains\": {}, \"chains\": {}, "
        "\"run_file\": {}, \"passes\": {}, \"ess_per_1000_passes\": {}, \"acceptance\": {}, "
        "\"divergent_trajectories\": {}}}",
        i == 0 ? "" : ",", json_string(method_name(c.method)), json_number(c.mass),
        json_string(tuning_axis_name(axis)), json_number(c.value), c.trained ? "true" : "false",
        chosen ? "true" : "false", json_number(m.ess_bulk), json_number(m.gradient_evals),
        json_number(m.ess_per_1000_grads), json_number(m.speed_ratio), json_number(m.test_nll),
        m.diverged_chains, m.chains, json_string(c.run_file), json_number(m.passes),
        json_number(m.ess_per_1000_passes), json_number(m.acceptance),
        json_number(m.divergent_trajectories));
  }
  out += "\n  ]\n}\n";
  return out;
}

}  // namespace credence
