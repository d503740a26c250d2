// Held-out NLL for early stopping, and its defaults (held_out.h).
#include "credence/held_out.h"

#include <fmt/format.h>

#include <algorithm>
#include <memory>

namespace credence {
namespace {

// Rows per forward pass: large enough for efficient products, small enough that the
// workspace stays a few MiB for the widest networks credence trains on a CPU.
constexpr Index kChunkRows = 512;

class HeldOutNll {
 public:
  HeldOutNll(const ParamLayout& layout, const TrainingRows& rows)
      : net_(layout),
        workspace_(layout, std::max<Index>(1, std::min<Index>(kChunkRows, rows.x.cols()))),
        rows_(rows),
        log_lik_(workspace_.max_batch()) {}

  Result<double> operator()(ConstThetaRef theta) {
    const Index n = rows_.x.cols();
    if (n == 0) return Status::invalid_input("early stopping has no validation rows to score");
    double sum = 0;
    for (Index start = 0; start < n; start += kChunkRows) {
      const Index count = std::min(kChunkRows, n - start);
      CREDENCE_RETURN_IF_ERROR(net_.forward(workspace_, theta, rows_.x.middleCols(start, count)));
      Result<double> part = net_.log_likelihood(
          log_lik_.head(count), workspace_,
          std::span<const std::int32_t>(rows_.labels).subspan(static_cast<std::size_t>(start),
                                                              static_cast<std::size_t>(count)));
      if (!part.ok()) return part.status();
      sum += *part;
    }
    return -sum / static_cast<double>(n);
  }

 private:
  Network<float> net_;
  Workspace<float> workspace_;
  const TrainingRows& rows_;
  Eigen::VectorXf log_lik_;
};

}  // namespace

std::vector<std::int64_t> held_out_rows(const std::vector<std::int64_t>& validation,
                                        std::int64_t max_rows) {
  const auto n = static_cast<std::int64_t>(validation.size());
  const std::int64_t r = std::min(max_rows, n);
  std::vector<std::int64_t> rows;
  rows.reserve(static_cast<std::size_t>(r));
  for (std::int64_t i = 0; i < r; ++i) rows.push_back(validation[static_cast<std::size_t>(i * n / r)]);
  return rows;
}

std::function<HeldOutScore(int chain)> held_out_nll(const ParamLayout& layout,
                                                    const TrainingRows& rows) {
  return [&layout, &rows](int) -> HeldOutScore {
    auto scorer = std::make_shared<HeldOutNll>(layout, rows);
    return [scorer](ConstThetaRef theta) { return (*scorer)(theta); };
  };
}

std::string size_early_stop(TrainSettings& s, std::int64_t train_rows,
                            std::int64_t validation_rows, const BudgetGiven& given,
                            const std::string& missing_class) {
  using D = EarlyStopDefaults;
  EarlyStopSettings& e = s.chains.early_stop;
  if (is_sampler(s.sampler.method) || validation_rows == 0) {
    e.every = 0;
    return {};
  }
  if (!missing_class.empty() && !given.check_every && !given.patience) {
    e.every = 0;
    return fmt::format("early stopping off: the {} validation rows hold no row of class '{}', "
                       "so their NLL would favour a network that never predicts it; the "
                       "optimizer runs its whole budget (--patience N turns it back on)",
                       validation_rows, missing_class);
  }
  const std::int64_t per_pass = steps_per_pass(train_rows, s.batches.batch_rows);
  const std::int64_t budget = s.chains.burn_in + 1;
  if (!given.check_every) e.every = std::clamp(per_pass, D::kEveryMin, D::kEveryMax);
  if (!given.patience) {
    e.patience = e.every > 0 ? std::max(D::kPatience, (D::kPatienceSteps + e.every - 1) / e.every)
                             : D::kPatience;
  }
  if (!given.min_steps) {
    const auto passes = static_cast<std::int64_t>(D::kMinStepsPasses * static_cast<double>(per_pass));
    e.min_steps = std::min(budget, std::max(D::kMinStepsFloor, passes));
  }
  // --patience 0 turns early stopping off.
  if (e.patience == 0) e.every = 0;
  return {};
}

}  // namespace credence
