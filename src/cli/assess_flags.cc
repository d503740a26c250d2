// assess_job_options: assess's typed flags to the options of run_assess_job.
#include "cli/assess_flags.h"

#include <fmt/format.h>

#include <cmath>

#include "cli/data_options.h"

namespace credence::cli {

// At most one rule: a fixed --threshold, costs, or a target sensitivity.
Status threshold_rule(const AssessFlags& flags, ThresholdSettings& t) {
  const bool cost = flags.cost_fp || flags.cost_fn;
  if ((flags.threshold ? 1 : 0) + (cost ? 1 : 0) + (flags.target_sensitivity ? 1 : 0) > 1) {
    return Status::invalid_input(
        "give one way to set the decision threshold: --threshold P, or --cost-fp and "
        "--cost-fn, or --target-sensitivity S");
  }
  if (flags.threshold) {
    if (!(*flags.threshold > 0 && *flags.threshold < 1)) {
      return Status::invalid_input(fmt::format(
          "--threshold {}: give a probability strictly between 0 and 1, e.g. 0.3",
          *flags.threshold));
    }
    t.threshold = *flags.threshold;
  } else if (cost) {
    t.rule = ThresholdRule::kCost;
    t.cost_fp = flags.cost_fp.value_or(1.0);
    t.cost_fn = flags.cost_fn.value_or(1.0);
    if (!(t.cost_fp > 0 && std::isfinite(t.cost_fp) && t.cost_fn > 0 &&
          std::isfinite(t.cost_fn))) {
      return Status::invalid_input(fmt::format(
          "--cost-fp {} --cost-fn {}: give two positive costs (the one not given is 1)",
          t.cost_fp, t.cost_fn));
    }
  } else if (flags.target_sensitivity) {
    t.rule = ThresholdRule::kSensitivity;
    t.target_sensitivity = *flags.target_sensitivity;
    if (!(t.target_sensitivity > 0 && t.target_sensitivity <= 1)) {
      return Status::invalid_input(fmt::format(
          "--target-sensitivity {}: give a fraction in (0, 1], e.g. 0.9", t.target_sensitivity));
    }
  }
  return Status::ok_status();
}

Result<AssessJobOptions> assess_job_options(const AssessFlags& flags) {
  AssessJobOptions o;
  if (flags.split == "auto") {
    o.split = AssessSplit::kAuto;
  } else if (flags.split == "test") {
    o.split = AssessSplit::kTest;
  } else if (flags.split == "val") {
    o.split = AssessSplit::kVal;
  } else if (flags.split == "all") {
    o.split = AssessSplit::kAll;
  } else {
    return Status::invalid_input(fmt::format(
        "--split '{}': use test (the run's held-out rows), val, all (every row) or auto",
        flags.split));
  }
  if (flags.binning == "width") {
    o.binning = Binning::kEqualWidth;
  } else if (flags.binning == "mass") {
    o.binning = Binning::kEqualMass;
  } else {
    return Status::invalid_input(fmt::format(
        "--binning '{}': use width (equal-width bins) or mass (equal counts per bin)",
        flags.binning));
  }
  if (flags.bins < 1 || flags.bins > 1000) {
    return Status::invalid_input(fmt::format("--bins {}: give 1 to 1000 (15 is usual)", flags.bins));
  }
  if (flags.samples < 0) {
    return Status::invalid_input(fmt::format(
        "--samples {}: give a positive count (or 0 for all kept samples)", flags.samples));
  }
  if (flags.bootstrap < 0) {
    return Status::invalid_input(fmt::format(
        "--bootstrap {}: give a number of resamples (0 for no intervals)", flags.bootstrap));
  }
  if (flags.temperature && !(*flags.temperature > 0 && std::isfinite(*flags.temperature))) {
    return Status::invalid_input(
        fmt::format("--temperature {}: give a positive number", *flags.temperature));
  }
  if (flags.save_temperature && !flags.temperature_scale) {
    return Status::invalid_input("--save-temperature stores the temperature that "
                                 "--temperature-scale fits; give both");
  }
  if (flags.temperature && flags.temperature_scale) {
    return Status::invalid_input("give either --temperature (a fixed value) or "
                                 "--temperature-scale (fit one), not both");
  }
  CREDENCE_RETURN_IF_ERROR(threshold_rule(flags, o.threshold));
  o.positive_class = flags.positive_class;
  o.metrics.bins = flags.bins;
  o.metrics.classwise_bins = flags.bins;
  o.metrics.curve_bins = flags.bins;
  o.metrics.bootstrap.resamples = flags.bootstrap;
  o.metrics.bootstrap.seed = flags.seed;
  o.metrics.bootstrap.ece_bins = flags.bins;
  o.metrics.bootstrap.ece_binning = o.binning;
  o.samples = flags.samples;
  o.temperature = flags.temperature;
  o.fit_temperature = flags.temperature_scale;
  o.truth_path = flags.truth_path;
  if (flags.unseen) {
    Result<UnseenPolicy> unseen = parse_unseen_flag(*flags.unseen);
    if (!unseen.ok()) return unseen.status();
    o.unseen = *unseen;
  }
  return o;
}

void add_decision_flags(CLI::App& sub, AssessFlags& flags) {
  sub.add_option("--positive-class", flags.positive_class,
                 "Two classes: the class decisions and curves are about (default: the run's, "
                 "else the class that sorts second)")
      ->group("Decisions");
  sub.add_option("--threshold", flags.threshold,
                 "Decide 'positive' where its probability is at least P (default 0.5)")
      ->group("Decisions");
  sub.add_option("--cost-fp", flags.cost_fp,
                 "Cost of a false positive: choose the threshold of least total cost on the "
                 "run's validation rows (with --cost-fn; the one not given is 1)")
      ->group("Decisions");
  sub.add_option("--cost-fn", flags.cost_fn, "Cost of a false negative (see --cost-fp)")
      ->group("Decisions");
  sub.add_option("--target-sensitivity", flags.target_sensitivity,
                 "Choose the highest threshold whose sensitivity on the run's validation rows "
                 "reaches S")
      ->group("Decisions");
}

}  // namespace credence::cli
