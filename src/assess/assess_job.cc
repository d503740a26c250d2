// run_assess_job: pick rows, encode them, run the ensemble, score it (and its tempered form).
#include "credence/assess.h"

#include <fmt/format.h>

#include <cmath>
#include <numeric>

#include "credence/run_settings.h"
#include "util/log.h"
#include "util/warn_once.h"

namespace credence {
namespace {

std::vector<std::int64_t> every_row(std::int64_t n) {
  std::vector<std::int64_t> rows(static_cast<std::size_t>(n));
  std::iota(rows.begin(), rows.end(), std::int64_t{0});
  return rows;
}

// Labels of `rows`, from the labels of every row.
std::vector<std::int32_t> pick(const std::vector<std::int32_t>& all,
                               const std::vector<std::int64_t>& rows) {
  std::vector<std::int32_t> out;
  out.reserve(rows.size());
  for (std::int64_t r : rows) out.push_back(all[static_cast<std::size_t>(r)]);
  return out;
}

// Reads p_<class> per class from a synth truth file; row i belongs to data row i.
Result<Eigen::MatrixXd> read_truth(const std::string& path, const Table& data,
                                   const std::vector<std::string>& classes) {
  Result<Table> truth = read_table(path, ReadOptions{});
  if (!truth.ok()) return truth.status();
  if (truth->rows() != data.rows()) {
    return Status::invalid_input(fmt::format(
        "{}: {} rows, but the data file has {}; give the truth file written with this table "
        "by credence synth",
        path, truth->rows(), data.rows()));
  }
  Eigen::MatrixXd p(static_cast<Index>(classes.size()), truth->rows());  // (K, N)
  for (std::size_t k = 0; k < classes.size(); ++k) {
    const std::string name = "p_" + classes[k];
    const int j = truth->find_column(name);
    if (j < 0 || truth->columns[static_cast<std::size_t>(j)].is_text) {
      return Status::invalid_input(fmt::format(
          "{}: no numeric column '{}'; a truth file has p_<class> for every class", path, name));
    }
    const std::vector<double>& v = truth->columns[static_cast<std::size_t>(j)].numbers;
    for (std::int64_t i = 0; i < truth->rows(); ++i) {
      if (!(v[static_cast<std::size_t>(i)] >= 0 && v[static_cast<std::size_t>(i)] <= 1)) {
        return Status::invalid_input(fmt::format(
            "{}:{}: column '{}' is not a probability in [0, 1]", path, i + 2, name));
      }
      p(static_cast<Index>(k), i) = v[static_cast<std::size_t>(i)];
    }
  }
  return p;
}

TruthScores score_truth(const Eigen::MatrixXd& truth, const std::vector<std::int64_t>& rows,
                        const ScoredEnsemble& scored, const std::vector<std::int32_t>& labels) {
  TruthScores t;
  const Eigen::MatrixXd& log_pbar = scored.split.log_mean;
  for (std::size_t i = 0; i < rows.size(); ++i) {
    const auto col = truth.col(rows[i]);
    const auto b = static_cast<Index>(i);
    for (Index k = 0; k < col.size(); ++k) {
      const double q = col(k);
      if (q > 0) t.kl += q * (std::log(q) - log_pbar(k, b));
      t.mae += std::abs(std::exp(log_pbar(k, b)) - q);
    }
    t.truth_nll -= std::log(col(labels[i]));
  }
  const double n = static_cast<double>(rows.size());
  t.kl /= n;
  t.mae /= n * static_cast<double>(truth.rows());
  t.truth_nll /= n;
  t.model_nll = scored.metrics.nll;
  return t;
}

Result<ScoredEnsemble> score(const Predictor& predictor, const Eigen::MatrixXf& x,
                             const std::vector<std::int32_t>& labels, double temperature,
                             const AssessJobOptions& options) {
  EvaluateOptions evaluate;
  evaluate.ece_bins = options.metrics.bins;
  evaluate.temperature = temperature;
  Result<EnsembleEvaluation> evaluation = evaluate_ensemble(predictor, x, labels, evaluate);
  if (!evaluation.ok()) return evaluation.status();
  Result<Assessment> metrics =
      assess_predictions(evaluation->split.log_mean, labels, options.metrics, &evaluation->split);
  if (!metrics.ok()) return metrics.status();
  ScoredEnsemble out;
  out.temperature = temperature;
  out.metrics = std::move(*metrics);
  out.split = std::move(evaluation->split);
  out.members = std::move(evaluation->members);
  return out;
}

std::string_view split_label(AssessSplit split) {
  switch (split) {
    case AssessSplit::kTest:
      return "test";
    case AssessSplit::kVal:
      return "validation";
    default:
      return "all rows";
  }
}

}  // namespace

ReadOptions read_options_of(const RunHeader& header) {
  TrainSettings ignored;
  ReadOptions read;
  if (Status s = from_values(header.settings, ignored, read); !s.ok()) {
    log().warn(
        "reading the run's CSV settings: {}; reading the table with the defaults "
        "(comma separated; missing: '', NA, NaN, null, ?)",
        s.message());
    return ReadOptions{};
  }
  return read;
}

MeanSd member_mean_sd(const std::vector<MemberScores>& members, double MemberScores::*score) {
  MeanSd out;
  if (members.empty()) return out;
  for (const MemberScores& m : members) out.mean += m.*score;
  out.mean /= static_cast<double>(members.size());
  if (members.size() < 2) return out;
  double sq = 0;
  for (const MemberScores& m : members) sq += (m.*score - out.mean) * (m.*score - out.mean);
  out.sd = std::sqrt(sq / static_cast<double>(members.size() - 1));
  return out;
}

Result<AssessJobResult> run_assess_job(const RunReader& run, const std::string& data_path,
                                       const AssessJobOptions& options) {
  const RunHeader& header = run.header();
  Preprocessing pre = header.preprocessing;
  if (options.unseen) pre.unseen = *options.unseen;
  AssessJobResult result;
  result.class_names = pre.class_names;
  Result<std::optional<PositiveClass>> positive =
      resolve_positive_class(pre, header.settings, options.positive_class);
  if (!positive.ok()) return positive.status();
  result.positive = *positive;
  AssessJobOptions job = options;
  if (result.positive) job.metrics.positive_class = result.positive->index;

  Result<std::string> sha = file_sha256_hex(data_path);
  if (!sha.ok()) {
    return Status::invalid_input(data_path + ": cannot be read; check the path");
  }
  result.data_sha256 = *sha;
  result.data_matches_run = *sha == header.data_sha256;
  AssessSplit split = options.split;
  if (split == AssessSplit::kAuto) {
    split = result.data_matches_run ? AssessSplit::kTest : AssessSplit::kAll;
    if (!result.data_matches_run) {
      log().info("{} is not the run's data file ({}); scoring every row", data_path,
                 header.data_file);
    }
  }
  if ((split == AssessSplit::kTest || split == AssessSplit::kVal || options.fit_temperature) &&
      !result.data_matches_run) {
    return Status::invalid_input(fmt::format(
        "{}: its SHA-256 differs from the run's data file {} ({}...), so the stored {} rows "
        "cannot be found in it; give the file the run was trained on, or --split all to score "
        "every row of a new labelled table{}",
        data_path, header.data_file, header.data_sha256.substr(0, 12),
        split == AssessSplit::kAll ? "validation" : split_label(split),
        options.fit_temperature ? " (temperature scaling needs the run's validation rows)"
                                : ""));
  }
  result.split_name = std::string(split_label(split));

  ReadOptions read = read_options_of(header);
  for (const std::string& name : text_columns_of(pre)) read.text_columns.push_back(name);
  Result<Table> table = read_table(data_path, read);
  if (!table.ok()) return table.status();
  if (table->find_column(pre.target) < 0) {
    return Status::invalid_input(fmt::format(
        "{}: no target column '{}'; assess needs labelled rows (use predict for unlabelled "
        "ones)",
        data_path, pre.target));
  }
  Result<std::vector<std::int32_t>> labels = encode_labels(pre, *table);
  if (!labels.ok()) return labels.status();

  switch (split) {
    case AssessSplit::kTest:
      result.rows = header.test_rows;
      break;
    case AssessSplit::kVal:
      result.rows = header.val_rows;
      break;
    default:
      result.rows = every_row(table->rows());
  }
  if (result.rows.empty()) {
    return Status::invalid_input(fmt::format(
        "the run's {} split is empty; use --split all or train with a larger split",
        result.split_name));
  }
  result.labels = pick(*labels, result.rows);
  if (options.metrics.bootstrap.resamples > 0 && result.rows.size() < kFewBootstrapRows) {
    warn_once(fmt::format("{}: bootstrap intervals rest on only {} {} rows (fewer than {}): "
                          "read them as rough", data_path,
                          result.rows.size(), result.split_name, kFewBootstrapRows));
  }

  PredictorOptions predictor_options;
  predictor_options.samples = options.samples;
  predictor_options.temperature = options.temperature;
  Result<Predictor> predictor = Predictor::create(run, predictor_options);
  if (!predictor.ok()) return predictor.status();
  result.samples = predictor->num_samples();

  Result<Eigen::MatrixXf> x = transform_rows(pre, *table, result.rows);
  if (!x.ok()) return x.status();
  const double base_temperature = options.fit_temperature ? 1.0 : predictor->temperature();
  Result<ScoredEnsemble> scored = score(*predictor, *x, result.labels, base_temperature, job);
  if (!scored.ok()) return scored.status();
  result.scored = std::move(*scored);
  if (result.positive) {
    // The threshold is chosen on the validation rows, never on the rows it is scored on.
    std::optional<PositiveScores> on_val;
    if (job.threshold.rule != ThresholdRule::kFixed && result.data_matches_run &&
        !header.val_rows.empty()) {
      Result<Eigen::MatrixXf> x_val = transform_rows(pre, *table, header.val_rows);
      if (!x_val.ok()) return x_val.status();
      const std::vector<std::int32_t> y_val = pick(*labels, header.val_rows);
      EvaluateOptions evaluate;
      evaluate.temperature = base_temperature;
      Result<EnsembleEvaluation> val = evaluate_ensemble(*predictor, *x_val, y_val, evaluate);
      if (!val.ok()) return val.status();
      on_val = positive_scores(val->split.log_mean.array().exp().matrix(), y_val,
                               result.positive->index);
    }
    Result<DecisionReport> decisions = report_decisions(
        positive_scores(result.scored.split.log_mean.array().exp().matrix(), result.labels,
                        result.positive->index),
        on_val ? &*on_val : nullptr, job.threshold);
    if (!decisions.ok()) return decisions.status();
    result.decisions = std::move(*decisions);
  } else if (job.threshold.rule != ThresholdRule::kFixed || job.threshold.threshold != 0.5) {
    return Status::invalid_input(fmt::format(
        "decision thresholds apply to two-class targets; '{}' has {} classes", pre.target,
        pre.class_names.size()));
  }

  std::optional<Eigen::MatrixXd> truth;
  if (!options.truth_path.empty()) {
    Result<Eigen::MatrixXd> read_back = read_truth(options.truth_path, *table, pre.class_names);
    if (!read_back.ok()) return read_back.status();
    truth = std::move(*read_back);
    result.scored.truth = score_truth(*truth, result.rows, result.scored, result.labels);
  }

  if (options.fit_temperature) {
    if (header.val_rows.empty()) {
      return Status::invalid_input(
          "the run has no validation rows to fit a temperature on; train with a validation "
          "split (--val-fraction)");
    }
    Result<Eigen::MatrixXf> x_val = transform_rows(pre, *table, header.val_rows);
    if (!x_val.ok()) return x_val.status();
    const std::vector<std::int32_t> y_val = pick(*labels, header.val_rows);
    EvaluateOptions evaluate;
    evaluate.keep_member_log_probs = true;
    evaluate.temperature = 1.0;
    Result<EnsembleEvaluation> val = evaluate_ensemble(*predictor, *x_val, y_val, evaluate);
    if (!val.ok()) return val.status();
    Result<TemperatureFit> fit = fit_ensemble_temperature(val->member_log_probs, y_val);
    if (!fit.ok()) return fit.status();
    result.fit = *fit;
    result.val_rows = static_cast<std::int64_t>(header.val_rows.size());
    if (header.val_rows.size() < kFewTemperatureRows) {
      warn_once(fmt::format("temperature {:.3g} fitted on only {} validation rows (fewer than "
                            "{}): it may not carry over to new rows", fit->temperature,
                            header.val_rows.size(), kFewTemperatureRows));
    }
    Result<ScoredEnsemble> calibrated =
        score(*predictor, *x, result.labels, fit->temperature, job);
    if (!calibrated.ok()) return calibrated.status();
    result.calibrated = std::move(*calibrated);
    if (truth) {
      result.calibrated->truth =
          score_truth(*truth, result.rows, *result.calibrated, result.labels);
    }
  }
  return result;
}

}  // namespace credence
