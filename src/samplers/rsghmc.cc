// Relativistic SGHMC (and rsgd, its T = 0 limit).
//
// "Relativistic Monte Carlo", AISTATS 2017; docs/methods.md 5.4-5.6:
//   p_{t+1}     = p_t - eps g_t - eps D v(p_t) + N(0, eps (2 D T - eps Bhat))
//   theta_{t+1} = theta_t + eps v(p_{t+1}),     v_i = c_i p_i / hypot(p_i, m_i c_i)
// (joint form: v = c p / sqrt(|p|^2 + m^2 c^2)). |v_i| <= c_i, so no coordinate moves
// more than eps c_i per step whatever the gradient. At T = 0 no noise is drawn: rsgd
// with the same arithmetic. During burn-in each slice's mass may adapt towards a
// target mean speed ratio E|v|/c (docs/methods.md 5.6), then it is frozen.
#include <algorithm>
#include <cmath>
#include <limits>

#include "samplers/relativistic.h"
#include "samplers/rule.h"

namespace credence::samplers {
namespace {

class RsghmcRule final : public Rule {
 public:
  RsghmcRule(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed)
      : Rule(s, p, n, seed),
        layout_(build_relativistic_layout(s.relativistic, p, base_step_, temperature_setting())),
        p_(Eigen::VectorXf::Zero(p)),
        v_(Eigen::VectorXf::Zero(p)),
        friction_(p),
        vhat_(Eigen::VectorXf::Zero(s.relativistic.correct_gradient_noise ? p : 0)),
        window_sum_(static_cast<std::size_t>(layout_.groups), 0.0),
        window_count_(static_cast<std::size_t>(layout_.groups), 0.0) {
    if (s.relativistic.friction > 0) {
      friction_.setConstant(static_cast<float>(s.relativistic.friction));
    } else {
      derive_friction(0, p);
    }
    [[maybe_unused]] const Status refreshed = refresh_constants();  // uniform by construction
  }

  Status step(ThetaRef theta, PotentialFn& potential, const StepContext& context,
              StepReport& report) override {
    CREDENCE_RETURN_IF_ERROR(evaluate_minibatch(theta, potential, report));
    const RelativisticSettings& rs = settings_.relativistic;
    const double eps = context.step_size;
    const double temperature = this->temperature(context);
    const bool noisy = temperature > 0;
    const bool correct = noisy && rs.correct_gradient_noise;
    if (correct) CREDENCE_RETURN_IF_ERROR(gradient_noise_variance(potential, vhat_));
    if (noisy) draw_noise();
    const Noise noise = !noisy ? Noise::kNone : (correct ? Noise::kCorrected : Noise::kConstant);
    std::int64_t clipped = 0;
    double speed_sum = 0;

    if (rs.joint) {
      speed_sum = joint_step(theta.data(), eps, temperature, noise, clipped);
      window_sum_[0] += speed_sum / static_cast<double>(p_.size());
      window_count_[0] += 1;
    } else {
      for (std::size_t r = 0; r < layout_.ranges.size(); ++r) {
        const CoordinateRange& range = layout_.ranges[r];
        const double range_sum =
            range_step(theta.data(), range, constants_[r], eps, temperature, noise, clipped);
        speed_sum += range_sum;
        window_sum_[static_cast<std::size_t>(range.group)] += range_sum;
        window_count_[static_cast<std::size_t>(range.group)] += static_cast<double>(range.length);
      }
    }
    ++steps_taken_;
    if (rs.adapt_mass && context.burn_in && noisy &&
        steps_taken_ % static_cast<std::uint64_t>(rs.adapt_window) == 0) {
      adapt_masses();
    } else if (!context.burn_in || !rs.adapt_mass) {
      std::fill(window_sum_.begin(), window_sum_.end(), 0.0);
      std::fill(window_count_.begin(), window_count_.end(), 0.0);
    }
    report.step_size = eps;
    report.speed_ratio = speed_sum / static_cast<double>(p_.size());
    report.clipped = clipped;
    clipped_total_ += static_cast<std::uint64_t>(clipped);
    return Status::ok_status();
  }

  SamplerState save_state() const override {
    SamplerState state;
    save_common(state);
    state.floats["p"] = to_floats(p_);
    state.floats["mass"] = to_floats(layout_.mass);
    state.floats["speed"] = to_floats(layout_.speed);
    state.floats["friction"] = to_floats(friction_);
    state.doubles["window_sum"] = window_sum_;
    state.doubles["window_count"] = window_count_;
    state.words["clipped_total"] = {clipped_total_};
    return state;
  }

  Status restore_state(const SamplerState& state) override {
    CREDENCE_RETURN_IF_ERROR(restore_common(state));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "p", p_));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "mass", layout_.mass));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "speed", layout_.speed));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "friction", friction_));
    auto sum = state.doubles.find("window_sum");
    auto count = state.doubles.find("window_count");
    auto clips = state.words.find("clipped_total");
    if (sum == state.doubles.end() || count == state.doubles.end() || clips == state.words.end() ||
        sum->second.size() != window_sum_.size() || count->second.size() != window_count_.size() ||
        clips->second.size() != 1) {
      return Status::corrupt("sampler state lacks the mass-adaptation windows");
    }
    window_sum_ = sum->second;
    window_count_ = count->second;
    clipped_total_ = clips->second[0];
    return refresh_constants();
  }

 private:
  enum class Noise { kNone, kConstant, kCorrected };

  // What one range's update needs, fixed while the masses are: mass, speed and friction
  // are constant within a range (build_relativistic_layout sets them per slice and
  // adapt_masses scales a whole range), so no coordinate divides or reads them.
  struct RangeConstants {
    float inv_mc = 1;    // 1 / (m c)
    float speed = 1;     // c
    float friction = 0;  // D
  };

  // Partial sums of |v|/c: kLanes float lanes the compiler keeps in one vector
  // register, flushed to double every kFlush coordinates so the float sums stay small.
  static constexpr std::int64_t kLanes = 16;
  static constexpr std::int64_t kFlush = 1024;

  double temperature_setting() const {
    return is_sampler(settings_.method) ? settings_.temperature : 0.0;
  }

  // v = c x / sqrt(1 + x^2), x = p / (m c): the one formula behind v_, both in the step
  // and after a mass change or a restore, so a resumed chain continues bit for bit.
  static float velocity(float p, float inv_mc, float c) {
    return c * relativistic_speed_fraction(p * inv_mc);
  }

  // Per-range constants and v_ = v(p_) after the masses change; corrupt when a
  // restored state's m, c or D vary inside a range.
  Status refresh_constants() {
    constants_.resize(layout_.ranges.size());
    for (std::size_t r = 0; r < layout_.ranges.size(); ++r) {
      const CoordinateRange& range = layout_.ranges[r];
      const auto n = static_cast<Eigen::Index>(range.length);
      const auto o = static_cast<Eigen::Index>(range.offset);
      if (n == 0) continue;
      const float m = layout_.mass[o], c = layout_.speed[o], d = friction_[o];
      if ((layout_.mass.segment(o, n).array() != m).any() ||
          (layout_.speed.segment(o, n).array() != c).any() ||
          (friction_.segment(o, n).array() != d).any()) {
        return Status::corrupt("sampler state has a mass, speed or friction that varies within a "
                               "slice of the relativistic layout");
      }
      // Capped at the largest float so p = 0 still gives x = 0, never 0 * inf.
      const double inv_mc = std::min(1.0 / (static_cast<double>(m) * c),
                                     static_cast<double>(std::numeric_limits<float>::max()));
      constants_[r] = {static_cast<float>(inv_mc), c, d};
      for (Eigen::Index i = o; i < o + n; ++i) v_[i] = velocity(p_[i], constants_[r].inv_mc, c);
    }
    if (settings_.relativistic.joint) joint_scale_ = joint_scale();
    return Status::ok_status();
  }

  // D = alpha m / eps on [offset, offset + length) under the current masses, so the
  // Newtonian friction factor eps D / m is alpha (docs/methods.md 5.4). The noise reads
  // the same D (2 D T), so the target exp(-(U + K)/T) holds for any D; only the damping
  // per step would drift from alpha if D stayed at the starting mass.
  void derive_friction(std::int64_t offset, std::int64_t length) {
    friction_.segment(offset, length) =
        layout_.mass.segment(offset, length) *
        static_cast<float>(settings_.relativistic.alpha / base_step_);
  }

  // Joint form: v = scale p with scale = c / sqrt(|p|^2 + m^2 c^2).
  double joint_scale() const {
    const double mc = static_cast<double>(layout_.mass[0]) * layout_.speed[0];
    return layout_.speed[0] / std::sqrt(p_.cast<double>().squaredNorm() + mc * mc);
  }

  // Noise standard deviation sqrt(eps (2 D T - eps Bhat)) of one coordinate, with Bhat
  // clipped so the bracket stays >= 2 D T 1e-3.
  static float corrected_sd(float full, float eps, float vhat, std::int64_t& clipped) {
    float bracket = full - eps * vhat;
    const bool clip = bracket < full * 1e-3f;
    clipped += clip ? 1 : 0;
    bracket = clip ? full * 1e-3f : bracket;
    return std::sqrt(eps * bracket);
  }

  // The fused update of one range (docs/methods.md 5.4): p -= eps g + eps D v(p_t) - noise,
  // v = v(p), theta += eps v. Returns the sum of |v|/c.
  // The noise kind is a template argument so the loop body has no branches to vectorise.
  double range_step(float* theta, const CoordinateRange& range, const RangeConstants& k,
                    double eps, double temperature, Noise noise, std::int64_t& clipped) {
    switch (noise) {
      case Noise::kNone:
        return range_step<Noise::kNone>(theta, range, k, eps, temperature, clipped);
      case Noise::kConstant:
        return range_step<Noise::kConstant>(theta, range, k, eps, temperature, clipped);
      case Noise::kCorrected:
        return range_step<Noise::kCorrected>(theta, range, k, eps, temperature, clipped);
    }
    return 0;
  }

  template <Noise noise>
  double range_step(float* __restrict theta, const CoordinateRange& range,
                    const RangeConstants& k, double eps, double temperature,
                    std::int64_t& clipped) {
    const std::int64_t o = range.offset;
    float* __restrict p = p_.data() + o;
    float* __restrict v = v_.data() + o;
    float* __restrict th = theta + o;
    const float* __restrict g = grad_.data() + o;
    const float* __restrict xi = noise_.data() + o;
    const float* __restrict vh = noise == Noise::kCorrected ? vhat_.data() + o : nullptr;
    const auto eps_f = static_cast<float>(eps);
    const float drag = eps_f * k.friction;
    const double full = 2.0 * static_cast<double>(k.friction) * temperature;
    const auto sd = static_cast<float>(std::sqrt(eps * full));
    const auto full_f = static_cast<float>(full);
    const float inv_mc = k.inv_mc, c = k.speed;
    std::int64_t clips = 0;
    auto one = [&](std::int64_t i) {
      float pi = p[i] + (-eps_f * g[i] - drag * v[i]);
      if constexpr (noise == Noise::kConstant) pi += sd * xi[i];
      if constexpr (noise == Noise::kCorrected) {
        pi += corrected_sd(full_f, eps_f, vh[i], clips) * xi[i];
      }
      const float r = relativistic_speed_fraction(pi * inv_mc);
      const float vi = c * r;
      p[i] = pi;
      v[i] = vi;
      th[i] += eps_f * vi;
      return std::abs(r);
    };
    double total = 0;
    const std::int64_t n = range.length;
    for (std::int64_t i = 0; i < n;) {
      const std::int64_t block_end = std::min(n, i + kFlush);
      float lanes[kLanes] = {};
      for (; i + kLanes <= block_end; i += kLanes) {
        for (std::int64_t j = 0; j < kLanes; ++j) lanes[j] += one(i + j);
      }
      for (std::int64_t j = 0; i < block_end; ++i, ++j) lanes[j] += one(i);
      double block = 0;
      for (float lane : lanes) block += lane;
      total += block;
    }
    clipped += clips;
    return total;
  }

  // Joint form: two passes, since the new scale needs all of the new p first.
  double joint_step(float* __restrict theta, double eps, double temperature, Noise noise,
                    std::int64_t& clipped) {
    const std::int64_t n = p_.size();
    float* __restrict p = p_.data();
    const float* __restrict g = grad_.data();
    const float* __restrict xi = noise_.data();
    const float* __restrict vh = noise == Noise::kCorrected ? vhat_.data() : nullptr;
    const auto eps_f = static_cast<float>(eps);
    const auto scale_old = static_cast<float>(joint_scale_);
    const float friction = constants_[0].friction;  // uniform: one range covers theta
    const float drag = eps_f * friction;
    const double full = 2.0 * static_cast<double>(friction) * temperature;
    const auto sd = static_cast<float>(std::sqrt(eps * full));
    const auto full_f = static_cast<float>(full);
    std::int64_t clips = 0;
    for (std::int64_t i = 0; i < n; ++i) {
      float pi = p[i] + (-eps_f * g[i] - drag * (scale_old * p[i]));
      if (noise == Noise::kConstant) pi += sd * xi[i];
      if (noise == Noise::kCorrected) pi += corrected_sd(full_f, eps_f, vh[i], clips) * xi[i];
      p[i] = pi;
    }
    clipped += clips;
    joint_scale_ = joint_scale();
    const auto scale_new = static_cast<float>(joint_scale_);
    const float step = eps_f * scale_new;
    double abs_sum = 0;
    for (std::int64_t i = 0; i < n;) {
      const std::int64_t block_end = std::min(n, i + kFlush);
      float block = 0;
      for (; i < block_end; ++i) {
        theta[i] += step * p[i];
        block += std::abs(p[i]);
      }
      abs_sum += block;
    }
    return abs_sum * joint_scale_ / static_cast<double>(layout_.speed[0]);
  }

  // docs/methods.md 5.6: E|v|/c falls as m grows, so a fast slice gets heavier. A derived
  // friction follows the new mass; a friction the user gave stays as given.
  void adapt_masses() {
    const RelativisticSettings& rs = settings_.relativistic;
    for (const CoordinateRange& range : layout_.ranges) {
      const auto g = static_cast<std::size_t>(range.group);
      if (window_count_[g] <= 0) continue;
      const double ratio = window_sum_[g] / window_count_[g];
      float factor = 1.0f;
      if (ratio > rs.target_speed_ratio + 0.1) factor = 1.1f;
      if (ratio < rs.target_speed_ratio - 0.1) factor = 1.0f / 1.1f;
      layout_.mass.segment(range.offset, range.length) *= factor;
      // Also when m did not move: a run file from before D followed m catches up here.
      if (rs.friction <= 0) derive_friction(range.offset, range.length);
    }
    std::fill(window_sum_.begin(), window_sum_.end(), 0.0);
    std::fill(window_count_.begin(), window_count_.end(), 0.0);
    // A whole range is scaled at once, so the constants stay uniform per range.
    [[maybe_unused]] const Status refreshed = refresh_constants();
  }

  RelativisticLayout layout_;         // m, c per coordinate; m adapts during burn-in
  Eigen::VectorXf p_;                 // (P) momentum
  Eigen::VectorXf v_;                 // (P) v(p_) under the current masses
  std::vector<RangeConstants> constants_;  // (ranges) while the masses hold
  double joint_scale_ = 0;            // joint form: v = joint_scale_ p
  Eigen::VectorXf friction_;          // (P) D
  Eigen::VectorXf vhat_;              // (P) gradient-noise variance, when corrected
  std::vector<double> window_sum_;    // (groups) sum of |v|/c in this adaptation window
  std::vector<double> window_count_;  // (groups)
  std::uint64_t clipped_total_ = 0;
};

}  // namespace

RulePtr make_rsghmc(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed) {
  return std::make_unique<RsghmcRule>(s, p, n, seed);
}

}  // namespace credence::samplers
