// Every sampler on correlated Gaussians in 2 and 10 dimensions (correlation 0.9,
// variances spanning a factor 100): sample mean and covariance against the truth
// (docs/methods.md 12.2) and, for the unadjusted linear rules, against the exact
// stationary covariance of the discrete recursion (docs/methods.md 2, 3, 4).
#include <gtest/gtest.h>

#include <cmath>
#include <string>
#include <vector>

#include "credence/samplers.h"
#include "testing/seed.h"
#include "testing/targets.h"

namespace credence {
namespace {

using testing::ReplicatedGaussian;

struct Target {
  int d;
  Eigen::VectorXd mean;
  Eigen::MatrixXd cov;
  Eigen::MatrixXd precision;
};

// Replicas per run: enough for Monte Carlo errors of ~0.02 on the normalised covariance
// entries, few enough to keep the test at a few seconds.
int replicas_for(int d) { return d <= 2 ? 1000 : 400; }

Target make_target(int d) {
  Target t;
  t.d = d;
  t.mean = Eigen::VectorXd::LinSpaced(d, -0.5, 0.5);
  // Standard deviations 0.1 .. 1 (variances 0.01 .. 1), correlation 0.9.
  t.cov = testing::correlated_covariance(d, 0.9, 0.1);
  t.precision = testing::inverse_spd(t.cov);
  return t;
}

// S = sum_k B^k Q B^k^T by doubling: the stationary covariance of x' = B x + noise(Q).
Eigen::MatrixXd discrete_lyapunov(Eigen::MatrixXd b, Eigen::MatrixXd q) {
  for (int i = 0; i < 40; ++i) {
    q = q + b * q * b.transpose();
    b = b * b;
  }
  return q;
}

// Largest eigenvalue of a symmetric positive-definite matrix by power iteration
// (numpy.linalg.eigvalsh gives 1.00812 / 2.29705 for the covariances here and
// 530.6 / 924.6 for their precisions).
double largest_eigenvalue(const Eigen::MatrixXd& a) {
  // Plain loops: Eigen's double reductions trip gcc 12's maybe-uninitialized check
  // under AVX-512.
  const Eigen::Index n = a.rows();
  std::vector<double> x(static_cast<std::size_t>(n), 1.0), y(x.size());
  double lambda = 0;
  for (int it = 0; it < 2000; ++it) {
    double norm_y = 0, norm_x = 0;
    for (Eigen::Index i = 0; i < n; ++i) {
      double sum = 0;
      for (Eigen::Index j = 0; j < n; ++j) sum += a(i, j) * x[static_cast<std::size_t>(j)];
      y[static_cast<std::size_t>(i)] = sum;
      norm_y += sum * sum;
      norm_x += x[static_cast<std::size_t>(i)] * x[static_cast<std::size_t>(i)];
    }
    lambda = std::sqrt(norm_y / norm_x);
    for (std::size_t i = 0; i < x.size(); ++i) x[i] = y[i] / std::sqrt(norm_y);
  }
  return lambda;
}

struct Moments {
  Eigen::VectorXd mean;
  Eigen::MatrixXd cov;
};

// Largest |mean error| in marginal sd units and largest |cov error| scaled by
// sqrt(S_ii S_jj), both against `reference`.
std::pair<double, double> errors(const Moments& m, const Eigen::VectorXd& mean,
                                 const Eigen::MatrixXd& cov) {
  const Eigen::VectorXd sd = cov.diagonal().cwiseSqrt();
  double mean_error = 0, cov_error = 0;
  for (Eigen::Index i = 0; i < mean.size(); ++i) {
    mean_error = std::max(mean_error, std::abs(m.mean[i] - mean[i]) / sd[i]);
    for (Eigen::Index j = 0; j < mean.size(); ++j) {
      cov_error = std::max(cov_error, std::abs(m.cov(i, j) - cov(i, j)) / (sd[i] * sd[j]));
    }
  }
  return {mean_error, cov_error};
}

// Runs one Sampler on R replicas in one vector; moments over replicas and time.
Moments sample_replicated(const SamplerSettings& s, const Target& t, int replicas, int burn_in,
                          int steps, double noise, std::uint64_t seed, Sampler** out = nullptr,
                          std::unique_ptr<Sampler>* keep = nullptr) {
  ReplicatedGaussian potential(t.mean, t.cov, replicas, noise, seed + 7);
  const Eigen::Index p = static_cast<Eigen::Index>(t.d) * replicas;
  auto made = Sampler::create(s, p, 1, seed);
  EXPECT_TRUE(made.ok()) << made.status().to_string();
  Sampler& sampler = **made;
  Eigen::VectorXf theta(p);
  // Start one marginal sd away from the mean: at the mean every gradient is 0.
  const Eigen::VectorXf start = (t.mean + t.cov.diagonal().cwiseSqrt()).cast<float>();
  for (int r = 0; r < replicas; ++r) theta.segment(r * t.d, t.d) = start;
  Eigen::VectorXd sum = Eigen::VectorXd::Zero(t.d);
  Eigen::MatrixXd outer = Eigen::MatrixXd::Zero(t.d, t.d);
  double count = 0;
  const int every = 10;
  for (int step = 0; step < burn_in + steps; ++step) {
    StepContext context;
    context.step = step;
    context.step_size = sampler.base_step_size();
    context.burn_in = step < burn_in;
    StepReport report;
    Status status = sampler.step(theta, potential, context, report);
    EXPECT_TRUE(status.ok()) << status.to_string();
    if (!status.ok()) break;
    if (step >= burn_in && step % every == 0) {
      Eigen::Map<const Eigen::MatrixXf> x(theta.data(), t.d, replicas);
      const Eigen::MatrixXd xd = x.cast<double>();
      sum += xd.rowwise().sum();
      outer += xd * xd.transpose();
      count += replicas;
    }
  }
  Moments m;
  m.mean = sum / count;
  m.cov = outer / count - m.mean * m.mean.transpose();
  if (out) *out = &sampler;
  if (keep) *keep = std::move(*made);
  return m;
}

// Runs hmc / rhmc as independent chains through the driver (Metropolis needs one
// target per chain, not many replicas in one vector).
Moments sample_chains(const SamplerSettings& s, const Target& t, std::uint64_t seed,
                      double* acceptance) {
  ChainSettings c;
  c.chains = 4;
  c.burn_in = 500;
  c.thin = 1;
  c.samples = 10000;
  c.seed = seed;
  Eigen::VectorXd sum = Eigen::VectorXd::Zero(t.d);
  Eigen::MatrixXd outer = Eigen::MatrixXd::Zero(t.d, t.d);
  double count = 0;
  ChainHooks hooks;
  hooks.on_sample = [&](const KeptSample& k) {
    const Eigen::VectorXd x = k.theta.cast<double>();
    sum += x;
    outer += x * x.transpose();
    ++count;
  };
  auto factory = [&](int) { return std::make_unique<ReplicatedGaussian>(t.mean, t.cov, 1); };
  auto init = [&](int, ThetaRef theta) {
    theta = t.mean.cast<float>();
    return Status::ok_status();
  };
  Result<RunOutcome> run = run_chains(s, c, t.d, factory, init, hooks);
  EXPECT_TRUE(run.ok() && run->status.ok());
  *acceptance = 0;
  for (const ChainOutcome& o : run->chains) *acceptance += o.mean_acceptance / 4;
  Moments m;
  m.mean = sum / count;
  m.cov = outer / count - m.mean * m.mean.transpose();
  return m;
}

// Tolerance 0.06 on the largest entry error: ~3 Monte Carlo standard errors of a
// normalised covariance entry at n_eff ~ 5000 (sqrt(2/5000) = 0.02), taken over all
// entries. The sharp checks of each discrete law are in stationary_test.cc.
void report(const std::string& label, const Moments& m, const Target& t,
            const Eigen::MatrixXd& reference, double tolerance) {
  auto [mean_truth, cov_truth] = errors(m, t.mean, t.cov);
  auto [mean_ref, cov_ref] = errors(m, t.mean, reference);
  double var_truth = 0;
  for (int i = 0; i < t.d; ++i) {
    var_truth = std::max(var_truth, std::abs(m.cov(i, i) / t.cov(i, i) - 1));
  }
  std::printf(
      "%-24s d=%2d vs truth: mean %.4f sd, var %.4f rel, cov %.4f | vs discrete law: "
      "mean %.4f, cov %.4f (tolerance %.2f)\n",
      label.c_str(), t.d, mean_truth, var_truth, cov_truth, mean_ref, cov_ref, tolerance);
  EXPECT_LT(mean_ref, tolerance) << label << " d=" << t.d;
  EXPECT_LT(cov_ref, tolerance) << label << " d=" << t.d;
}

class GaussianTargets : public ::testing::TestWithParam<int> {};

TEST_P(GaussianTargets, SgldMatchesItsDiscreteStationaryLaw) {
  // Exact discrete law (docs/methods.md 2 per eigen-direction): S = (A - eps A^2 / 4)^-1.
  const Target t = make_target(GetParam());
  const double lambda_min = 1.0 / largest_eigenvalue(t.precision);
  SamplerSettings s;
  s.method = Method::kSgld;
  s.step_size = 0.8 * lambda_min;  // stable below 4 lambda_min; stiff-direction bias 25%
  const Eigen::MatrixXd a = t.precision;
  const Eigen::MatrixXd reference = testing::inverse_spd(a - s.step_size / 4 * a * a);
  const int relax = static_cast<int>(2 * largest_eigenvalue(t.cov) / s.step_size);
  Moments m =
      sample_replicated(s, t, replicas_for(t.d), 3 * relax, 12 * relax, 0, testing::test_seed(51));
  report("sgld", m, t, reference, 0.06);
}

TEST_P(GaussianTargets, SghmcMatchesItsDiscreteStationaryLawAlsoWithNoisyGradients) {
  // Exact discrete law (docs/methods.md 4): S = (A - eta A^2 / (2 (2 - alpha)))^-1; with
  // gradient noise V and beta_hat = eta V / 2 the law is the same.
  const Target t = make_target(GetParam());
  const double lambda_min = 1.0 / largest_eigenvalue(t.precision);
  for (double noise : {0.0, 50.0}) {
    SamplerSettings s;
    s.method = Method::kSghmc;
    s.step_size = 0.3 * lambda_min;
    s.sghmc.alpha = 0.05;
    s.sghmc.correct_gradient_noise = noise > 0;
    const Eigen::MatrixXd a = t.precision;
    const Eigen::MatrixXd reference =
        testing::inverse_spd(a - s.step_size / (2 * (2 - 0.05)) * a * a);
    Moments m =
        sample_replicated(s, t, replicas_for(t.d), 3000, 12000, noise, testing::test_seed(52));
    report(noise > 0 ? "sghmc, noisy gradient" : "sghmc", m, t, reference, 0.06);
  }
}

TEST_P(GaussianTargets, PsgldMatchesItsDiscreteStationaryLawWithFrozenPreconditioner) {
  // With G frozen after burn-in: x' = (I - (eps/2) G A) x + sqrt(eps G) xi, whose
  // stationary covariance solves a discrete Lyapunov equation (docs/methods.md 3).
  const Target t = make_target(GetParam());
  SamplerSettings s;
  s.method = Method::kPsgld;
  s.step_size = 0.02;
  Sampler* sampler = nullptr;
  std::unique_ptr<Sampler> keep;
  Moments m = sample_replicated(s, t, replicas_for(t.d), 2000, 12000, 0, testing::test_seed(53),
                                &sampler, &keep);
  // G is per coordinate of the replicated vector; replicas differ slightly, so the
  // reference uses replica 0's G and the tolerance covers the spread.
  const auto g = keep->save_state().floats.at("preconditioner");
  Eigen::VectorXd g0(t.d);
  for (int i = 0; i < t.d; ++i) g0[i] = g[static_cast<std::size_t>(i)];
  const Eigen::MatrixXd b =
      Eigen::MatrixXd::Identity(t.d, t.d) - s.step_size / 2 * g0.asDiagonal() * t.precision;
  const Eigen::MatrixXd q = (s.step_size * g0).asDiagonal();
  report("psgld (frozen G)", m, t, discrete_lyapunov(b, q), 0.06);
}

TEST_P(GaussianTargets, RsghmcMatchesTheTruthAtSmallStep) {
  // No closed form for the discrete law; at eps = 0.01 the O(eps) bias is below the
  // Monte Carlo error here (checked by halving eps: the errors do not shrink).
  const Target t = make_target(GetParam());
  for (double noise : {0.0, 50.0}) {
    SamplerSettings s;
    s.method = Method::kRsghmc;
    s.step_size = 0.01;
    s.relativistic.mass = 1;
    s.relativistic.speed = 1;
    s.relativistic.friction = 5;
    s.relativistic.adapt_mass = false;
    s.relativistic.correct_gradient_noise = noise > 0;
    Moments m =
        sample_replicated(s, t, replicas_for(t.d), 3000, 12000, noise, testing::test_seed(54));
    report(noise > 0 ? "rsghmc, noisy gradient" : "rsghmc", m, t, t.cov, 0.06);
  }
}

TEST_P(GaussianTargets, HmcAndRhmcMatchTheTruth) {
  const Target t = make_target(GetParam());
  for (Method method : {Method::kHmc, Method::kRhmc}) {
    SamplerSettings s;
    s.method = method;
    s.step_size = 0.05;
    s.hmc.leapfrog_steps = 30;
    s.relativistic.mass = 1;
    s.relativistic.speed = 2;
    double acceptance = 0;
    Moments m = sample_chains(s, t, testing::test_seed(55), &acceptance);
    std::printf("%s mean acceptance after warm-up %.3f\n", std::string(method_name(method)).c_str(),
                acceptance);
    report(std::string(method_name(method)), m, t, t.cov, 0.06);
  }
}

INSTANTIATE_TEST_SUITE_P(Dimensions, GaussianTargets, ::testing::Values(2, 10));

}  // namespace
}  // namespace credence
