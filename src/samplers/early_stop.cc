// Early stopping (early_stop.h).
#include "samplers/early_stop.h"

#include <fmt/format.h>

#include <cmath>

namespace credence {

NamedArrays early_stop_state_template(std::int64_t parameters) {
  NamedArrays state;
  const std::string prefix(kEarlyStopStatePrefix);
  state.floats[prefix + "best_theta"].assign(static_cast<std::size_t>(parameters), 0.0f);
  state.doubles[prefix + "best_score"].assign(1, 0.0);
  state.words[prefix + "counters"].assign(4, 0);
  return state;
}

namespace samplers {
namespace {

const std::string kPrefix(kEarlyStopStatePrefix);

// Signed counters travel as words; -1 becomes the largest word and back.
std::uint64_t word(std::int64_t v) { return static_cast<std::uint64_t>(v); }
std::int64_t signed_of(std::uint64_t w) { return static_cast<std::int64_t>(w); }

}  // namespace

EarlyStopper::EarlyStopper(const EarlyStopSettings& settings, std::int64_t parameters,
                           HeldOutScore scorer)
    : settings_(settings), scorer_(std::move(scorer)), best_theta_(parameters) {
  best_theta_.setZero();
}

Result<bool> EarlyStopper::after_step(std::int64_t step, std::int64_t total, ConstThetaRef theta) {
  const bool last = step + 1 >= total;
  if (!last && (step + 1) % settings_.every != 0) return false;
  Result<double> score = scorer_(theta);
  if (!score.ok()) return score.status();
  if (!std::isfinite(*score)) {
    return Status::diverged(fmt::format("the held-out score is {} after step {}", *score, step));
  }
  if (*score < best_score_ - settings_.min_improvement || best_step_ < 0) {
    checks_without_gain_ = 0;
  } else {
    ++checks_without_gain_;
  }
  // The best iterate follows every decrease, counted as a gain or not.
  if (*score < best_score_ || best_step_ < 0) {
    best_score_ = *score;
    best_step_ = step;
    best_theta_ = theta;
  }
  const bool early = !last && checks_without_gain_ >= settings_.patience &&
                     step + 1 >= settings_.min_steps;
  if (early || last) {
    ended_at_ = step;
    ended_early_ = early;
  }
  return early || last;
}

std::string EarlyStopper::reason() const {
  if (ended_at_ < 0) return {};
  if (!ended_early_) {
    return fmt::format("ran its whole budget ({} steps); kept the best held-out score {:.6g} "
                       "after step {}",
                       ended_at_ + 1, best_score_, best_step_);
  }
  return fmt::format("stopped early after step {}: the held-out score did not improve by {:g} "
                     "in {} checks of every {} steps; kept the best, {:.6g} after step {}",
                     ended_at_, settings_.min_improvement, settings_.patience, settings_.every,
                     best_score_, best_step_);
}

void EarlyStopper::save(NamedArrays& into) const {
  into.floats[kPrefix + "best_theta"].assign(best_theta_.data(),
                                             best_theta_.data() + best_theta_.size());
  into.doubles[kPrefix + "best_score"] = {best_score_};
  into.words[kPrefix + "counters"] = {word(best_step_), word(checks_without_gain_),
                                      word(ended_at_), word(ended_early_ ? 1 : 0)};
}

Status EarlyStopper::restore(const NamedArrays& from) {
  const auto theta = from.floats.find(kPrefix + "best_theta");
  const auto score = from.doubles.find(kPrefix + "best_score");
  const auto counters = from.words.find(kPrefix + "counters");
  if (theta == from.floats.end() || score == from.doubles.end() || counters == from.words.end() ||
      theta->second.size() != static_cast<std::size_t>(best_theta_.size()) ||
      score->second.size() != 1 || counters->second.size() != 4) {
    return Status::corrupt("early stopping's state is missing or has the wrong size");
  }
  best_theta_ = Eigen::Map<const Eigen::VectorXf>(theta->second.data(), best_theta_.size());
  best_score_ = score->second[0];
  best_step_ = signed_of(counters->second[0]);
  checks_without_gain_ = signed_of(counters->second[1]);
  ended_at_ = signed_of(counters->second[2]);
  ended_early_ = counters->second[3] != 0;
  return Status::ok_status();
}

void take_early_stop_state(NamedArrays& state, NamedArrays& into) {
  auto take = [](auto& from, auto& to) {
    for (auto it = from.begin(); it != from.end();) {
      if (std::string_view(it->first).starts_with(kEarlyStopStatePrefix)) {
        to.insert(from.extract(it++));
      } else {
        ++it;
      }
    }
  };
  take(state.floats, into.floats);
  take(state.doubles, into.doubles);
  take(state.words, into.words);
}

}  // namespace samplers
}  // namespace credence
