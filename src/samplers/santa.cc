// Santa: annealed, RMSprop-preconditioned SG-MCMC with a per-coordinate thermostat (and
// santa-opt, its annealed zero-temperature optimizer).
//
// "Bridging the Gap between Stochastic Gradient MCMC and Stochastic Optimization",
// AISTATS 2016; docs/methods.md section 16. We implement the Euler
// scheme (the paper's first-order integrator, not its symmetric splitting), with
// f = grad U~ (full-data scale), eta = lr / N, T_t = 1 / beta_t:
//   v_t     = sigma v_{t-1} + (1 - sigma) f_t^2 / N^2,     g_t = 1 / sqrt(lambda + sqrt(v_t))
//   exploration:  alpha_t = alpha_{t-1} + u_{t-1}^2 - eta T_t
//                 u_t     = sqrt(2 eta^(3/2) g_{t-1} T_t) zeta + (1 - alpha_t) u_{t-1}
//                           - eta g_t f_t
//   refinement:   u_t     = (1 - alpha) u_{t-1} - eta g_t f_t         (alpha frozen)
//   theta_t = theta_{t-1} + g_t u_t
// The injected noise scales as eta^(3/2), not eta: u = sqrt(eta) p makes the time step
// sqrt(eta), and the thermostat then settles at alpha = sqrt(eta) g; with eta alone it
// would need 2 alpha - alpha^2 = 2 g, impossible once g > 1/2 (docs/methods.md 16, measured).
// We drop the term (eta / beta) (1 - g_{t-1} / g_t) / u_{t-1}, the method's estimate of
// the preconditioner's drift correction, as the reference configurations do: it divides by
// u, and in sampler mode v may only grow after burn-in (g only shrinks, and only where a
// coordinate's gradient outgrows its burn-in average), so for kept samples it is zero
// almost everywhere.
//
// santa (sampler): T_t = settings.temperature at every step, never refines. Two departures
// from the reference, both measured on tables of 32 to 1,000,000 rows (docs/methods.md
// section 16): (1) the thermostat has a relative gain: after alpha += u^2 - eta T, log alpha
// moves by c alpha (u^2 / (eta T) - 1) (clipped to +-0.1) and alpha stays at most
// max_friction. With eta = lr / N, minibatch noise heats u by an amount that does not
// shrink with N while the thermostat's target eta T does, so the friction alpha must
// supply grows about as N, and the reference increment (~eta per step) cannot bring it
// there within any budget stated in passes: chains ran hot and ended near-constant. (2) v
// is not frozen after burn-in but may only grow: a weight whose gradient was ~0 in burn-in
// keeps g ~ its cap, and when its unit woke up the frozen g diverged a 1,000,000-row chain.
// santa-opt: beta_t = A (t + B)^gamma with t = step + 1, exploration for the first
// exploration_fraction of the chain's steps, then refinement without noise; at the switch
// alpha is clipped to [0, 1) so |1 - alpha| <= 1 (the count is kept in the state).
// g is capped at sqrt(max_preconditioner_ratio) times its median, as psgld caps G.
// u_0 = sqrt(eta) zeta; alpha_0 = sqrt(eta) C, or when C = 0 the thermostat's equilibrium
// sqrt(eta) g_1 per coordinate (santa) or optimizer_start_friction (santa-opt, whose
// thermostat only adds friction), at most 1; v_0 = f_1^2 / N^2 (v_0 = 0 would inflate g_1).
#include <algorithm>
#include <cmath>

#include "samplers/rule.h"

namespace credence::samplers {
namespace {

constexpr float kAlphaBelowOne = 1.0f - 1e-6f;
// The thermostat's relative gain moves alpha by at most this factor's log per step, so one
// outlying u^2 cannot throw it past max_friction's neighbourhood in a step.
constexpr float kMaxLogStep = 0.1f;

class SantaRule final : public Rule {
 public:
  SantaRule(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed)
      : Rule(s, p, n, seed),
        u_(Eigen::VectorXf::Zero(p)),
        alpha_(Eigen::VectorXf::Zero(p)),
        v_(Eigen::VectorXf::Zero(p)),
        g_(Eigen::VectorXf::Zero(p)),
        g_previous_(Eigen::VectorXf::Zero(p)),
        scratch_(Eigen::VectorXf::Zero(p)) {}

  Status step(ThetaRef theta, PotentialFn& potential, const StepContext& context,
              StepReport& report) override {
    CREDENCE_RETURN_IF_ERROR(evaluate_minibatch(theta, potential, report));
    const SantaSettings& ss = settings_.santa;
    const double eta = context.step_size;
    const bool sampler = is_sampler(settings_.method);
    const bool first = started_ == 0;
    // Sampler mode lets v only grow after burn-in, so the dropped drift correction is zero
    // except where a coordinate's gradient outgrows its burn-in scale.
    update_preconditioner(first, sampler && !context.burn_in);
    if (first) start(eta);
    const double temperature = sampler ? this->temperature(context) : anneal_temperature(context);
    const bool explore = sampler || context.total_steps <= 0 ||
                         static_cast<double>(context.step) <
                             ss.exploration_fraction * static_cast<double>(context.total_steps);
    if (!explore && refining_ == 0) enter_refinement();

    const auto eta_f = static_cast<float>(eta);
    const auto heat = static_cast<float>(eta * temperature);  // eta / beta_t
    float* __restrict th = theta.data();
    float* __restrict u = u_.data();
    float* __restrict alpha = alpha_.data();
    const float* __restrict g = g_.data();
    const float* __restrict gp = g_previous_.data();
    const float* __restrict f = grad_.data();
    const std::int64_t n = parameters_;
    if (explore && temperature > 0) {
      draw_noise();
      const float* __restrict zeta = noise_.data();
      const auto scale = static_cast<float>(2.0 * std::pow(eta, 1.5) * temperature);
      const auto gain = static_cast<float>(sampler ? ss.thermostat_gain : 0.0);
      const auto max_alpha = static_cast<float>(ss.max_friction);
      const auto inv_heat = static_cast<float>(1.0 / (eta * temperature));
      for (std::int64_t i = 0; i < n; ++i) {
        float ai = alpha[i] + (u[i] * u[i] - heat);
        if (gain > 0 && ai > 0) {
          const float excess = u[i] * u[i] * inv_heat - 1.0f;  // kinetic T / target T - 1
          const float log_step = std::clamp(gain * ai * excess, -kMaxLogStep, kMaxLogStep);
          ai = std::min(max_alpha, ai * std::exp(log_step));
        }
        alpha[i] = ai;
        const float ui = std::sqrt(scale * gp[i]) * zeta[i] + (1.0f - ai) * u[i] - eta_f * g[i] * f[i];
        u[i] = ui;
        th[i] += g[i] * ui;
      }
    } else if (explore) {
      for (std::int64_t i = 0; i < n; ++i) {
        const float ai = alpha[i] + u[i] * u[i];
        alpha[i] = ai;
        const float ui = (1.0f - ai) * u[i] - eta_f * g[i] * f[i];
        u[i] = ui;
        th[i] += g[i] * ui;
      }
    } else {
      for (std::int64_t i = 0; i < n; ++i) {
        const float ui = (1.0f - alpha[i]) * u[i] - eta_f * g[i] * f[i];
        u[i] = ui;
        th[i] += g[i] * ui;
      }
    }
    report.step_size = eta;
    ++steps_taken_;
    return Status::ok_status();
  }

  SamplerState save_state() const override {
    SamplerState state;
    save_common(state);
    state.floats["u"] = to_floats(u_);
    state.floats["alpha"] = to_floats(alpha_);
    state.floats["v"] = to_floats(v_);
    state.floats["preconditioner"] = to_floats(g_);
    state.words["santa_started"] = {started_};
    state.words["santa_refining"] = {refining_};
    state.words["alpha_clipped"] = {alpha_clipped_};
    return state;
  }

  Status restore_state(const SamplerState& state) override {
    CREDENCE_RETURN_IF_ERROR(restore_common(state));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "u", u_));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "alpha", alpha_));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "v", v_));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "preconditioner", g_));
    for (auto [name, into] : {std::pair{"santa_started", &started_},
                              std::pair{"santa_refining", &refining_},
                              std::pair{"alpha_clipped", &alpha_clipped_}}) {
      auto it = state.words.find(name);
      if (it == state.words.end() || it->second.size() != 1) {
        return Status::corrupt(std::string("sampler state lacks '") + name + "'");
      }
      *into = it->second[0];
    }
    return Status::ok_status();
  }

 private:
  // v and g from this step's gradient; g_previous_ keeps g_{t-1} for the noise (g_1 on the
  // first step). `grow_only` (santa after burn-in): v keeps its larger value, so g only
  // shrinks and the cap, set from burn-in's median, still holds without recomputing it.
  // Plain loops: Eigen's AVX-512 packet sqrt trips gcc 12's maybe-uninitialized check.
  void update_preconditioner(bool first, bool grow_only) {
    const SantaSettings& ss = settings_.santa;
    const auto inv_n2 = static_cast<float>(1.0 / (static_cast<double>(rows_) * static_cast<double>(rows_)));
    const auto sigma = static_cast<float>(ss.sigma);
    const auto lambda = static_cast<float>(ss.lambda);
    float* __restrict v = v_.data();
    float* __restrict g = g_.data();
    float* __restrict gp = g_previous_.data();
    const float* __restrict f = grad_.data();
    for (std::int64_t i = 0; i < parameters_; ++i) {
      const float f2 = f[i] * f[i] * inv_n2;
      if (first) {
        v[i] = f2;
      } else {
        const float next = sigma * v[i] + (1.0f - sigma) * f2;
        v[i] = grow_only ? std::max(v[i], next) : next;
      }
      const float gi = 1.0f / std::sqrt(lambda + std::sqrt(v[i]));
      gp[i] = first ? gi : g[i];
      g[i] = grow_only ? std::min(g[i], gi) : gi;
    }
    if (!grow_only && ss.max_preconditioner_ratio > 0) cap_preconditioner(first);
  }

  // g_i^2 <= ratio * median(g^2), as psgld caps G: a weight whose gradient is ~0 (a dead
  // unit) would otherwise get g ~ lambda^(-1/2) and a burst of noise and motion. The median
  // from nth_element on a preallocated copy.
  void cap_preconditioner(bool first) {
    scratch_ = g_;
    const auto middle = scratch_.data() + scratch_.size() / 2;
    std::nth_element(scratch_.data(), middle, scratch_.data() + scratch_.size());
    const auto cap =
        static_cast<float>(std::sqrt(settings_.santa.max_preconditioner_ratio) * *middle);
    for (std::int64_t i = 0; i < parameters_; ++i) {
      g_[i] = std::min(g_[i], cap);
      if (first) g_previous_[i] = g_[i];
    }
  }

  void start(double eta) {
    const double root = std::sqrt(eta);
    draw_noise();
    u_ = static_cast<float>(root) * noise_;
    const SantaSettings& ss = settings_.santa;
    const double c = ss.friction;
    const bool sampler = is_sampler(settings_.method);
    for (std::int64_t i = 0; i < parameters_; ++i) {
      const double a0 = c > 0    ? root * c
                        : sampler ? root * static_cast<double>(g_[i])
                                  : ss.optimizer_start_friction;
      alpha_[i] = static_cast<float>(std::min(a0, 1.0));
    }
    started_ = 1;
  }

  // T_t = 1 / beta_t, beta_t = A (t + B)^gamma with t = step + 1.
  double anneal_temperature(const StepContext& context) const {
    const SantaSettings& ss = settings_.santa;
    const double t = static_cast<double>(context.step) + 1.0;
    return 1.0 / (ss.anneal_scale * std::pow(t + ss.anneal_offset, ss.anneal_power));
  }

  void enter_refinement() {
    for (std::int64_t i = 0; i < parameters_; ++i) {
      const float clipped = std::clamp(alpha_[i], 0.0f, kAlphaBelowOne);
      alpha_clipped_ += static_cast<std::uint64_t>(clipped != alpha_[i]);
      alpha_[i] = clipped;
    }
    refining_ = 1;
  }

  Eigen::VectorXf u_;           // (P) velocity-like u = sqrt(eta) p
  Eigen::VectorXf alpha_;       // (P) thermostat (friction per step)
  Eigen::VectorXf v_;           // (P) average of (f / N)^2
  Eigen::VectorXf g_;           // (P) preconditioner g_t (g_{t-1} at the next step)
  Eigen::VectorXf g_previous_;  // (P) workspace: g_{t-1} during a step
  Eigen::VectorXf scratch_;     // (P) workspace for the median
  std::uint64_t started_ = 0;   // 1 once u, alpha and v are initialised
  std::uint64_t refining_ = 0;  // 1 once santa-opt switched to refinement
  std::uint64_t alpha_clipped_ = 0;  // coordinates clipped at the switch
};

}  // namespace

RulePtr make_santa(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed) {
  return std::make_unique<SantaRule>(s, p, n, seed);
}

}  // namespace credence::samplers
