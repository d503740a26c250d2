// pSGLD: SGLD with an RMSprop-style diagonal preconditioner.
//
// "Preconditioned stochastic gradient Langevin dynamics for deep neural networks",
// AAAI 2016; docs/methods.md section 3:
//   V_t = rho V_{t-1} + (1 - rho) gbar_t^2,   gbar = g / N,   Vhat = V_t / (1 - rho^t)
//   G_t = 1 / (lambda + sqrt(Vhat_t))
//   theta_{t+1} = theta_t - (eps/2) (G_t g_t - T Gamma_t) + sqrt(eps T G_t) xi
// When the potential reports its Gaussian prior's precisions c (adapt_without_prior, the
// default), gbar = (g - c theta) / N and G_t = 1 / (lambda + sqrt(Vhat_t + c / N^2)): a G
// that follows the prior's term c theta tilts the target by 1 / G and, with a learned
// prior scale, drives the precisions towards 0 (docs/methods.md section 3).
// Gamma is dropped by default (the paper's choice); with it switched on, G_i is
// differentiated through the bias-corrected average (docs/methods.md section 3),
//   Gamma_i ~ -(1 - rho) / (1 - rho^t) gbar_i Hbar_ii / (sqrt(Vhat_i) (lambda + sqrt(Vhat_i))^2)
// with Hbar_ii a secant estimate from the last two steps. After burn-in G is frozen
// by default, which makes Gamma exactly 0; V keeps running, and a G_i whose adapted
// value falls below half the frozen one (a revived dead unit) takes that value.
#include <algorithm>
#include <cmath>
#include <limits>

#include "samplers/rule.h"

namespace credence::samplers {
namespace {

class PsgldRule final : public Rule {
 public:
  PsgldRule(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed)
      : Rule(s, p, n, seed),
        scratch_(Eigen::VectorXf::Zero(p)),
        gbar_(Eigen::VectorXf::Zero(p)),
        prior_v_(Eigen::VectorXf::Zero(p)),
        v_(Eigen::VectorXf::Zero(p)),
        g_precond_(Eigen::VectorXf::Zero(p)),
        gamma_(Eigen::VectorXf::Zero(p)),
        previous_theta_(Eigen::VectorXf::Zero(p)),
        previous_gbar_(Eigen::VectorXf::Zero(p)) {}

  Status step(ThetaRef theta, PotentialFn& potential, const StepContext& context,
              StepReport& report) override {
    CREDENCE_RETURN_IF_ERROR(evaluate_minibatch(theta, potential, report));
    const PsgldSettings& ps = settings_.psgld;
    const double eps = context.step_size;
    const double temperature = this->temperature(context);
    const float inv_n = 1.0f / static_cast<float>(rows_);
    const bool adapt = !(ps.freeze_after_burn_in && !context.burn_in) || adapted_ == 0;
    const bool follow_revival = !adapt && ps.shrink_on_revival;
    if (adapt || follow_revival) {
      ++adapted_;
      const auto rho = static_cast<float>(ps.rho);
      const auto correction =
          static_cast<float>(1.0 - std::pow(ps.rho, static_cast<double>(adapted_)));
      const auto lambda = static_cast<float>(ps.lambda);
      // gbar: the mean gradient G adapts to. When the potential splits out its Gaussian
      // prior (precision c_i), the prior's term c_i theta_i / N leaves gbar and its
      // squared average is replaced by its expectation under the prior, c_i / N^2, which
      // does not move with theta_i (docs/methods.md section 3).
      if (ps.adapt_without_prior && potential.prior_precision(prior_v_)) {
        gbar_ = (grad_ - prior_v_.cwiseProduct(theta)) * inv_n;
        prior_v_ *= inv_n * inv_n;
      } else {
        gbar_ = grad_ * inv_n;
        prior_v_.setZero();
      }
      // Plain loops for sqrt: Eigen's AVX-512 packet sqrt trips gcc 12's
      // maybe-uninitialized check.
      float* __restrict v = v_.data();
      float* __restrict gp = g_precond_.data();
      const float* __restrict gb = gbar_.data();
      const float* __restrict pv = prior_v_.data();
      const auto trigger = static_cast<float>(PsgldSettings::kShrinkTrigger);
      for (std::int64_t i = 0; i < parameters_; ++i) {
        const float gbar = gb[i];
        const float vi = rho * v[i] + (1.0f - rho) * (gbar * gbar);
        v[i] = vi;
        const float adapted = 1.0f / (lambda + std::sqrt(vi / correction + pv[i]));
        if (!follow_revival) {
          gp[i] = adapted;
        } else if (adapted < trigger * gp[i]) {
          gp[i] = adapted;  // a revived coordinate: its frozen G would diverge
        }
      }
      if (adapt && ps.max_preconditioner_ratio > 0) {
        cap_preconditioner(ps.max_preconditioner_ratio);
      }
      if (adapt && ps.gamma_correction && adapted_ > 1) {
        for (Eigen::Index i = 0; i < theta.size(); ++i) {
          const float gbar = gbar_[i];
          const float d_theta = theta[i] - previous_theta_[i];
          const float root = std::sqrt(v_[i] / correction + prior_v_[i]);
          // A secant through nearly equal points says nothing about the curvature; a
          // capped G_i is the cap, which does not move with theta_i.
          const bool usable = std::abs(d_theta) > 1e-12f && root > 0 && g_precond_[i] < cap_;
          const float hessian = usable ? (gbar - previous_gbar_[i]) / d_theta : 0.0f;
          // d Vhat / d theta = (1 - rho) 2 gbar Hbar / (1 - rho^t): the bias correction
          // divides the newest increment too (50x at t = 2, rho = 0.99).
          gamma_[i] = usable ? -((1.0f - rho) / correction) * gbar * hessian /
                                   (root * (lambda + root) * (lambda + root))
                             : 0.0f;
        }
        previous_theta_ = theta;
        previous_gbar_ = gbar_;
      } else if (adapt && ps.gamma_correction) {
        previous_theta_ = theta;
        previous_gbar_ = gbar_;
      }
      if (!adapt) gamma_.setZero();  // G moves only on revival: Gamma stays dropped
    } else {
      gamma_.setZero();
    }
    // One fused pass: theta - (eps/2)(G g - T Gamma), then + sqrt(eps T G) xi.
    const auto half = static_cast<float>(eps / 2);
    const auto temperature_f = static_cast<float>(temperature);
    const bool gamma = ps.gamma_correction;
    float* __restrict th = theta.data();
    const float* __restrict gp = g_precond_.data();
    const float* __restrict g = grad_.data();
    const float* __restrict gm = gamma_.data();
    const std::int64_t n = parameters_;
    if (temperature > 0) {
      draw_noise();
      const float* __restrict xi = noise_.data();
      const auto scale = static_cast<float>(eps * temperature);
      if (gamma) {
        for (std::int64_t i = 0; i < n; ++i) {
          th[i] = (th[i] - half * (gp[i] * g[i] - temperature_f * gm[i])) +
                  std::sqrt(scale * gp[i]) * xi[i];
        }
      } else {
        for (std::int64_t i = 0; i < n; ++i) {
          th[i] = (th[i] - half * (gp[i] * g[i])) + std::sqrt(scale * gp[i]) * xi[i];
        }
      }
    } else if (gamma) {
      for (std::int64_t i = 0; i < n; ++i) th[i] -= half * (gp[i] * g[i] - temperature_f * gm[i]);
    } else {
      for (std::int64_t i = 0; i < n; ++i) th[i] -= half * (gp[i] * g[i]);
    }
    report.step_size = eps;
    ++steps_taken_;
    return Status::ok_status();
  }

  SamplerState save_state() const override {
    SamplerState state;
    save_common(state);
    state.floats["v"] = to_floats(v_);
    state.floats["preconditioner"] = to_floats(g_precond_);
    state.floats["gamma"] = to_floats(gamma_);
    state.floats["previous_theta"] = to_floats(previous_theta_);
    state.floats["previous_gbar"] = to_floats(previous_gbar_);
    state.words["adapted_steps"] = {adapted_};
    return state;
  }

  Status restore_state(const SamplerState& state) override {
    CREDENCE_RETURN_IF_ERROR(restore_common(state));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "v", v_));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "preconditioner", g_precond_));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "gamma", gamma_));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "previous_theta", previous_theta_));
    CREDENCE_RETURN_IF_ERROR(restore_vector(state, "previous_gbar", previous_gbar_));
    auto it = state.words.find("adapted_steps");
    if (it == state.words.end() || it->second.size() != 1) {
      return Status::corrupt("sampler state lacks 'adapted_steps'");
    }
    adapted_ = it->second[0];
    return Status::ok_status();
  }

  // G_i <= ratio * median(G); the median from nth_element on a preallocated copy.
  void cap_preconditioner(double ratio) {
    scratch_ = g_precond_;
    const auto middle = scratch_.data() + scratch_.size() / 2;
    std::nth_element(scratch_.data(), middle, scratch_.data() + scratch_.size());
    const auto cap = static_cast<float>(ratio * static_cast<double>(*middle));
    cap_ = cap;
    for (Eigen::Index i = 0; i < g_precond_.size(); ++i) {
      g_precond_[i] = std::min(g_precond_[i], cap);
    }
  }

 private:
  Eigen::VectorXf scratch_;         // (P) workspace for the median
  Eigen::VectorXf gbar_;            // (P) this step's mean gradient that G adapts to
  Eigen::VectorXf prior_v_;         // (P) c_i / N^2: the prior term's expected gbar^2
  Eigen::VectorXf v_;               // (P) squared-gradient average, gbar units^2
  Eigen::VectorXf g_precond_;       // (P) G, frozen after burn-in by default
  Eigen::VectorXf gamma_;           // (P) Gamma term (zero unless switched on)
  Eigen::VectorXf previous_theta_;  // (P) for the secant Hessian estimate
  Eigen::VectorXf previous_gbar_;   // (P)
  std::uint64_t adapted_ = 0;       // t in the bias correction 1 - rho^t
  // This step's cap on G (infinite without one); recomputed before Gamma reads it.
  float cap_ = std::numeric_limits<float>::infinity();
};

}  // namespace

RulePtr make_psgld(const SamplerSettings& s, std::int64_t p, std::int64_t n, std::uint64_t seed) {
  return std::make_unique<PsgldRule>(s, p, n, seed);
}

}  // namespace credence::samplers
