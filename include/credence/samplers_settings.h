// Sampler and optimizer settings: the method names, one plain struct per method,
// the step-size schedule. Every step size is stored in U units (docs/methods.md
// section 0); a learning rate quoted on the mean loss is converted when a chain
// starts, with N = PotentialFn::rows().
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "credence/status.h"

namespace credence {

/// The update rules. Samplers and their zero-temperature optimizer limits share
/// one implementation: sgd is sgld at T = 0, momentum is sghmc at T = 0, rsgd is
/// rsghmc at T = 0 (docs/methods.md section 7), santa-opt is santa annealed to T = 0
/// (docs/methods.md section 16).
enum class Method {
  kSgld,      // SGLD, ICML 2011
  kPsgld,     // preconditioned SGLD, AAAI 2016
  kSghmc,     // SGHMC, ICML 2014 (momentum parameterisation)
  kRsghmc,    // relativistic SGHMC, "Relativistic Monte Carlo", AISTATS 2017
  kSgd,       // sgld at T = 0
  kMomentum,  // sghmc at T = 0 (heavy ball)
  kRsgd,      // rsghmc at T = 0
  kAdam,      // Adam, ICLR 2015 (optimizer only)
  kHmc,       // full-batch HMC with Metropolis correction
  kRhmc,      // full-batch relativistic HMC with Metropolis correction
  kSanta,     // Santa, AISTATS 2016 (Euler scheme), at a fixed temperature
  kSantaOpt,  // santa annealed to T = 0, then refinement ("santa-opt")
};

/// "sgld", "psgld", ... (lower case, as on the command line).
std::string_view method_name(Method method);
/// Parses a method name; an unknown name fails with kInvalidInput and a message
/// listing every valid name.
Result<Method> parse_method(std::string_view name);
/// True for the methods that sample at T > 0 (not sgd, momentum, rsgd, adam, santa-opt).
bool is_sampler(Method method);
/// True for hmc and rhmc, which need PotentialFn::full().
bool is_full_batch(Method method);

/// How the step size moves with the step index t = 0, 1, 2, ... of a chain.
enum class ScheduleKind {
  kConstant,    // eps_t = step
  kPolynomial,  // eps_t = a (b + t)^(-gamma), docs/methods.md section 2; optimizers only
                // (a sampler's kept samples would need step-size weights)
  kCyclical,    // cosine cycles, docs/methods.md section 8
};

struct ScheduleSettings {
  ScheduleKind kind = ScheduleKind::kConstant;
  /// kPolynomial: decay exponent gamma in (0.5, 1]. Default 0.55 (the SGLD paper's
  /// experiments, from memory).
  double gamma = 0.55;
  /// kPolynomial: the step at the last step is step_end / step_start times the
  /// first; a and b follow from docs/methods.md's start/end fit. Default 0.01.
  double end_ratio = 0.01;
  /// kCyclical: number of cycles M over the whole chain. Default 4.
  int cycles = 4;
  /// kCyclical: fraction beta of each cycle that explores (runs at T = 0). Default 0.8.
  double exploration_fraction = 0.8;
};

/// psgld's own settings (docs/methods.md section 3).
struct PsgldSettings {
  /// Decay rho of the squared-gradient average. Default 0.99.
  double rho = 0.99;
  /// lambda, added to sqrt(V) in mean-gradient (g / N) units. Default 1e-5.
  double lambda = 1e-5;
  /// Cap every G_i at this multiple of the median G while adapting (docs/methods.md 3:
  /// coordinates whose gradient is ~0, such as dead units or a start at a stationary
  /// point, would otherwise get G = 1/lambda and a burst of noise). 0 = no cap.
  /// Default 1e3.
  double max_preconditioner_ratio = 1e3;
  /// Stop adapting G when burn-in ends, so the kept chain has a fixed metric and
  /// the dropped Gamma term is exactly zero. Default true.
  bool freeze_after_burn_in = true;
  /// With G frozen: keep the squared-gradient average V running, and replace G_i by its
  /// adapted value when that falls below kShrinkTrigger times the frozen one (sqrt(V_i)
  /// has more than doubled). A coordinate whose gradient was near zero when burn-in
  /// ended (a dead unit) froze at a large G; when the unit revives, that G times the new
  /// gradient diverged (docs/methods.md section 3, "G frozen, but not on a revived
  /// unit"). On a stationary chain V stays far below the trigger, so G stays frozen.
  /// Default true; run files of earlier builds resume with false.
  bool shrink_on_revival = true;
  static constexpr double kShrinkTrigger = 0.5;
  /// Adapt G from the likelihood's gradient alone: g minus the Gaussian prior's term
  /// c_i theta_i, when the potential reports c (PotentialFn::prior_precision). A G built
  /// from the prior's term scales as 1 / |theta_i| on coordinates the data barely
  /// touch; without the Gamma term that tilts the chain by |theta_i| per coordinate and,
  /// with a learned prior scale, drives the precisions towards 0 (docs/methods.md
  /// section 3). false uses the whole gradient, as the paper does. Default true.
  bool adapt_without_prior = true;
  /// Add the Gamma correction term, with the diagonal Hessian estimated by secants
  /// of successive gradients (docs/methods.md section 3). Default false: the term is
  /// O(1 - rho), needs second derivatives, and a noisy estimate can hurt more than
  /// it helps.
  bool gamma_correction = false;
};

/// sghmc's (and momentum's) own settings (docs/methods.md section 4).
struct SghmcSettings {
  /// Friction alpha = eps M^-1 C (momentum = 1 - alpha). Default 0.1: the middle of
  /// the paper's range 0.01-0.1 in log terms would be 0.03; 0.1 mixes faster in energy
  /// on standardised tabular data and stays far from SGLD (alpha near 1).
  double alpha = 0.1;
  /// Subtract the minibatch noise beta_hat = eta Vhat / 2 from the injected noise,
  /// with Vhat from PotentialFn::gradient_noise_variance(); clipped to
  /// [0, alpha T (1 - 1e-3)] and the clips counted. A potential that does not estimate
  /// Vhat (the table potential) is refused: step() fails with kInvalidInput. Default
  /// false (beta_hat = 0, the paper's practical choice).
  bool correct_gradient_noise = false;
  /// Redraw v from N(0, eta T) every this many steps; 0 = never. Default 0.
  std::int64_t resample_every = 0;
};

/// A slice [offset, offset + length) of theta (in practice a layer) with its own
/// relativistic mass and speed of light. A value of 0 means "use the default".
struct RelativisticSlice {
  std::int64_t offset = 0;
  std::int64_t length = 0;
  double mass = 0.0;
  double speed = 0.0;
};

/// rsghmc's, rsgd's and rhmc's relativistic kinetic energy (docs/methods.md section 5).
struct RelativisticSettings {
  /// Speed of light c per coordinate: default c = max_move / eps, so no coordinate
  /// moves more than max_move per step at the starting step eps. 0 means "derive".
  /// rhmc keeps c while dual averaging and jitter change eps: its bound per leapfrog
  /// step is eps c, which is what the adaptation tunes (see src/samplers/rhmc.cc).
  double speed = 0.0;
  /// Largest move of one coordinate per step, used to derive c. Default 1e-2
  /// (docs/methods.md 5.6: 1e-2 times a unit prior scale of standardised data). For rhmc
  /// with step adaptation it is the bound at the starting step only.
  double max_move = 1e-2;
  /// Rest mass m; 0 means "derive": m = u* T / c^2 for the target speed ratio
  /// below (u* from docs/methods.md 5.2's table), or m = 1 at T = 0.
  double mass = 0.0;
  /// Per-slice overrides of mass and speed; coordinates outside every slice use the
  /// defaults above. Slices must not overlap. Mass adaptation works per slice (one
  /// slice for all of theta when this is empty).
  std::vector<RelativisticSlice> slices;
  /// Joint (isotropic) kinetic energy with one m and one c for all of theta instead
  /// of the per-coordinate form. Default false (docs/methods.md 5.1: the joint form makes
  /// every coordinate of a large network crawl). Not available for rhmc.
  bool joint = false;
  /// Friction D; 0 means "derive" D_i = alpha m_i / eps, which matches SGHMC's
  /// alpha in the Newtonian limit (docs/methods.md 5.4). A derived D follows m while mass
  /// adaptation changes it, so eps D_i / m_i stays alpha; a given D stays fixed. The
  /// injected noise 2 D T uses the same D either way. Default 0.
  double friction = 0.0;
  /// alpha used to derive D. Default 0.1 (as SghmcSettings::alpha).
  double alpha = 0.1;
  /// rsghmc only: adapt each slice's m during burn-in towards the target mean
  /// speed ratio E|v|/c (docs/methods.md 5.6; a credence heuristic). Default true.
  bool adapt_mass = true;
  /// Target E|v|/c for deriving and adapting m. Default 0.5 (u* = 1.8285).
  double target_speed_ratio = 0.5;
  /// Steps per adaptation window. Default 100.
  std::int64_t adapt_window = 100;
  /// rsghmc only: subtract the minibatch noise eps^2 Bhat with Bhat = Vhat,
  /// clipped so 2 D T - eps Bhat >= 2 D T 1e-3. Refused (kInvalidInput from step())
  /// with a potential that does not estimate Vhat, such as the table potential.
  /// Default false.
  bool correct_gradient_noise = false;
  /// rhmc only: slice-sampling sweeps per momentum refresh (30 on the first).
  /// Default 5 (docs/methods.md 5.2: nearly independent after 5).
  int refresh_sweeps = 5;
};

/// Adam's own settings (ICLR 2015 defaults). Adam runs on the mean loss: it divides
/// the gradient of U by N before use, so its step is in mean-loss units.
struct AdamSettings {
  double beta1 = 0.9;     // first-moment decay. Default 0.9.
  double beta2 = 0.999;   // second-moment decay. Default 0.999.
  double epsilon = 1e-8;  // added to sqrt(vhat). Default 1e-8.
};

/// santa's and santa-opt's learning rate when none is given (the CLI's default; the struct
/// default stays 1e-2). At 1e-2 santa diverged after burn-in on a 1,400-row invented table
/// (2 of 4 chains, with the preconditioner cap); 1e-3 gave test NLL 0.523 there, as sghmc
/// at its default (0.523). Measured on that one table only.
inline constexpr double kSantaLearningRate = 1e-3;

/// sgld's learning rate when none is given (the CLI's, compare's and Python's default; the
/// struct default stays 1e-2); once the table is read, training sizes it from here up to
/// 0.3 as the table grows (credence/budget.h, size_learning_rate). Measured at defaults against 1e-2 and 3e-2 (4 chains,
/// tests/tools/evaluate_defaults.py, docs/prior.md "sgld's step"): test NLL lower on 9 of
/// 11 tables of 32-569 rows (e.g. breast cancer's 100-row subsample 0.103 -> 0.089,
/// digits' 0.777 -> 0.697), higher on two (up to +0.025), no divergence up to 1,000,000
/// rows; on the demo table the worst probe-row R-hat after 60,000 steps per chain fell
/// from 1.41 to 1.05. sgld's injected noise has variance 2 eps = 4 lr / N per step, so
/// at 1e-2 the chain crawls: the preconditioned and momentum samplers move further per
/// gradient at their own defaults.
inline constexpr double kSgldLearningRate = 1e-1;

/// psgld's learning rate when none is given (the struct default stays 1e-2). Measured at
/// defaults on 15 tables (tests/tools/evaluate_defaults.py, docs/prior.md "psgld's step"):
/// at 1e-2 its preconditioner, which grows where gradients are small, blew small tables
/// up (breast cancer's 100-row subsample 0.463 against logistic regression's 0.045, wine
/// 0.308, breast cancer 0.156); at 3e-3 they scored 0.087, 0.123 and 0.053, lower on 10
/// of 15 tables, higher on 4 (digits' 100-row subsample 0.593 -> 0.686 the most).
inline constexpr double kPsgldLearningRate = 3e-3;

/// The learning rate `method` starts from when none is given: kSantaLearningRate for
/// santa and santa-opt, kSgldLearningRate for sgld, kPsgldLearningRate for psgld,
/// SamplerSettings' 1e-2 otherwise.
double default_learning_rate(Method method);

/// santa's and santa-opt's own settings (docs/methods.md section 16, Euler scheme).
struct SantaSettings {
  /// Decay sigma of the squared-gradient average v. Default 0.999 (the reference
  /// configurations). 1 keeps the first gradient's scale for the whole chain.
  double sigma = 0.999;
  /// lambda in g = 1 / sqrt(lambda + sqrt(v)), v in mean-gradient units. Default 1e-8.
  double lambda = 1e-8;
  /// Cap every g_i^2 at this multiple of the median g^2 while v adapts (as psgld's
  /// max_preconditioner_ratio: a weight whose gradient is ~0 would get g = lambda^(-1/2));
  /// 0 = no cap. Default 1e3 (without it santa diverged at --lr 1e-2 on a 1,400-row
  /// invented table in 4 of 4 chains).
  double max_preconditioner_ratio = 1e3;
  /// Friction constant C: the thermostat starts at alpha_0 = sqrt(eta) C, at most 1.
  /// 0 = derive: santa starts at alpha_0 = sqrt(eta) g_1 per coordinate, the thermostat's
  /// equilibrium without minibatch noise; santa-opt at optimizer_start_friction.
  /// Default 0: the reference configurations' C = 1000 assumes steps far below ours
  /// (eta ~ 1e-11), and the reference thermostat needs ~1 / eta steps to undo a wrong start.
  double friction = 0.0;
  /// santa-opt's alpha_0 when friction is 0: 1 minus the starting momentum. Default 0.1
  /// (momentum 0.9, as sghmc's and momentum's default friction). santa-opt's thermostat
  /// only adds friction (its temperature falls to 0), so the start sets its early
  /// momentum; the derived sqrt(eta) g_1 = sqrt(lr / N) g_1 shrinks as the table grows,
  /// and on a 1,000,000-row linear table santa-opt then ended near-constant (test NLL
  /// 0.677 against the truth's 0.401; 0.401 at 0.1). docs/methods.md section 16.
  double optimizer_start_friction = 0.1;
  /// santa only: the thermostat's relative gain c. Each step, after the reference
  /// increment alpha += u^2 - eta T, log alpha moves by c alpha (u^2 / (eta T) - 1),
  /// clipped to +-0.1, so alpha settles in about 1 / (c alpha) steps on every table; the
  /// reference increment alone needs ~alpha^2 / (eta T) steps, far beyond the budget once
  /// minibatch noise raises the friction alpha must supply (eta = lr / N: it grows about
  /// as N). 0 = the reference thermostat alone. Default 0.05 (docs/methods.md section 16:
  /// measured on 15 tables and 1,000,000 rows; the spread of log alpha is about sqrt(c)).
  double thermostat_gain = 0.05;
  /// santa with thermostat_gain > 0: the thermostat's alpha is kept at most this (1 - alpha
  /// is the momentum; past 1 the velocity flips sign every step and past 2 it grows).
  /// Default 0.5 (our choice, no source).
  double max_friction = 0.5;
  /// santa-opt: inverse temperature beta_t = A (t + B)^gamma, t = 1, 2, ...
  /// Defaults A = 1, B = 0, gamma = 2 (the reference configurations for dense networks).
  double anneal_scale = 1.0;
  double anneal_offset = 0.0;
  double anneal_power = 2.0;
  /// santa-opt: fraction of the chain's steps in the annealed exploration stage; the
  /// rest refine without noise. Default 0.5 (the reference configurations).
  double exploration_fraction = 0.5;
};

/// hmc's and rhmc's own settings (docs/methods.md section 6).
struct HmcSettings {
  /// Leapfrog steps per iteration L. Default 20 (docs/methods.md: 20-100).
  int leapfrog_steps = 20;
  /// Adapt eps by dual averaging during burn-in towards target_acceptance, then
  /// freeze it at the averaged value. Default true.
  bool adapt_step = true;
  /// delta. Default 0.65 (the No-U-Turn sampler paper, JMLR 2014).
  double target_acceptance = 0.65;
  /// Jitter eps uniformly in [1 - jitter, 1 + jitter] times eps. Default 0.1.
  double jitter = 0.1;
  /// hmc only: diagonal mass, one value for all coordinates. Default 1.
  double mass = 1.0;
};

/// Everything that defines one method's run except the chain layout.
struct SamplerSettings {
  Method method = Method::kSgld;

  // --- Step size ---
  /// Step size in U units: SGLD's eps (sgld, psgld, sgd), eta (sghmc, momentum),
  /// the time step eps (rsghmc, rsgd, hmc, rhmc), eta (santa, santa-opt), Adam's a in
  /// mean-loss units
  /// (adam). 0 means "derive from learning_rate".
  double step_size = 0.0;
  /// Learning rate lr on the mean loss U~/N, converted when step_size is 0:
  /// eps = 2 lr / N (sgld, psgld, sgd), eta = lr / N (sghmc, momentum, santa, santa-opt),
  /// eps = sqrt(lr / N) (rsghmc, rsgd, hmc, rhmc: the time step whose Newtonian
  /// SGHMC equivalent eta = eps^2 / m has eta = lr / N at m = 1), a = lr (adam).
  /// Default 1e-2: the middle of the range 1e-3 to 1e-1 docs/methods.md quotes for
  /// standardised inputs (common practice, no source). Adam's paper default is 1e-3.
  double learning_rate = 1e-2;
  ScheduleSettings schedule;

  // --- Target ---
  /// Temperature T >= 0 (1 = Bayes posterior). Ignored (0) by the optimizers. run_chains
  /// replaces it by the potential's PotentialFn::noise_temperature() when that fixes one
  /// (1 under likelihood-only tempering, whose potential already holds the 1/T).
  double temperature = 1.0;

  // --- Per-method ---
  PsgldSettings psgld;
  SghmcSettings sghmc;
  RelativisticSettings relativistic;
  AdamSettings adam;
  HmcSettings hmc;
  SantaSettings santa;
};

/// Checks the settings once; fails with kInvalidInput naming the field and what
/// to do.
Status validate(const SamplerSettings& settings);
/// validate(settings) plus the checks that need the parameter count P (relativistic
/// slices inside [0, P), not overlapping).
Status validate(const SamplerSettings& settings, std::int64_t parameters);

/// The step size in U units: settings.step_size, or learning_rate converted with N.
/// REQUIRES: rows >= 1.
double base_step_size(const SamplerSettings& settings, std::int64_t rows);

/// The step size at step t of a chain of `total_steps` steps, and whether that step
/// explores (runs at T = 0: the exploration stage of a cyclical schedule).
class StepSchedule {
 public:
  /// REQUIRES: base_step > 0, total_steps >= 1.
  StepSchedule(const ScheduleSettings& settings, double base_step, std::int64_t total_steps);

  /// Step size at step t = 0, 1, 2, ... (steps past the end keep decaying / cycling).
  double step_size(std::int64_t t) const;
  /// True in the exploration stage of a cyclical schedule.
  bool exploring(std::int64_t t) const;

  /// Polynomial coefficients: eps_t = a (b + t)^(-gamma).
  double a() const { return a_; }
  double b() const { return b_; }

 private:
  ScheduleSettings settings_;
  double base_;
  double a_ = 0.0, b_ = 1.0;
  std::int64_t cycle_length_ = 1;
};

/// Fits eps_t = a (b + t)^(-gamma) through eps_0 = start and eps_{n_total} = end
/// (docs/methods.md section 2): b = n / ((start/end)^(1/gamma) - 1), a = start b^gamma.
/// REQUIRES: start > end > 0, gamma > 0, n_total >= 1.
void fit_polynomial_decay(double start, double end, double gamma, std::int64_t n_total, double& a,
                          double& b);

}  // namespace credence
