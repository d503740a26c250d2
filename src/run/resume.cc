// prepare_resumed_run and the chain-state conversions (resume.h).
#include "run/resume.h"

#include <fmt/format.h>

#include "credence/held_out.h"

namespace credence {
namespace {

ChainStatus chain_status_of(const std::optional<ChainEnd>& end) {
  if (!end) return ChainStatus::kRunning;
  switch (*end) {
    case ChainEnd::kCompleted: return ChainStatus::kCompleted;
    case ChainEnd::kDiverged: return ChainStatus::kDiverged;
    case ChainEnd::kStopped: return ChainStatus::kStopped;
    case ChainEnd::kFailed: return ChainStatus::kFailed;
  }
  return ChainStatus::kFailed;
}

}  // namespace

Result<PreparedRun> prepare_resumed_run(const RunHeader& header, const std::string& data_override) {
  PreparedRun p;
  p.header = header;
  ReadOptions read;
  CREDENCE_RETURN_IF_ERROR(from_values(header.settings, p.settings, read));
  // The stored settings are untrusted input like the rest of the file (issue 22).
  if (Status s = validate_train_settings(p.settings); !s.ok()) {
    return Status::corrupt("the run file's stored settings (/settings): " + s.message() +
                           "; the file is damaged or was not written by credence");
  }
  const std::string path = data_override.empty() ? header.data_file : data_override;
  Result<std::string> digest = file_sha256_hex(path);
  if (!digest.ok()) return digest.status();
  if (*digest != header.data_sha256) {
    return Status::invalid_input(fmt::format(
        "{}: this is not the data the run started with (SHA-256 {} differs from the stored "
        "{}); give the original file as DATA.csv", path, *digest, header.data_sha256));
  }
  read.text_columns = text_columns_of(header.preprocessing);
  Result<Table> table = read_table(path, read);
  if (!table.ok()) return table.status();
  Result<Eigen::MatrixXf> x = transform_table(header.preprocessing, *table);
  if (!x.ok()) return x.status();
  Result<std::vector<std::int32_t>> labels = encode_labels(header.preprocessing, *table);
  if (!labels.ok()) return labels.status();
  Result<NetSpec> spec = parse_net_text(header.net_text, "net text stored in the run file");
  if (!spec.ok()) return spec.status();
  p.spec = *spec;
  Result<ParamLayout> layout = resolve_layout(
      p.spec, header.preprocessing.input_width,
      static_cast<Index>(header.preprocessing.class_names.size()));
  if (!layout.ok()) return layout.status();
  p.layout = *layout;
  p.rows = gather_training_rows(*x, *labels, header.train_rows);
  if (p.settings.chains.early_stop.every > 0) {
    p.held_out = gather_training_rows(*x, *labels, held_out_rows(header.val_rows));
  }
  p.probe = gather_probe(*x, *labels, header.probe_rows);
  return p;
}

ChainCheckpoint checkpoint_of(const ChainState& state) {
  ChainCheckpoint c;
  c.chain = state.chain;
  c.next_step = state.next_step;
  c.kept = state.kept;
  c.seconds = state.seconds;
  c.gradient_evals = state.gradient_evals;
  c.theta = Eigen::Map<const Eigen::VectorXf>(state.theta.data(),
                                              static_cast<Eigen::Index>(state.theta.size()));
  c.state = state.state;
  return c;
}

ChainState state_of(const ChainCheckpoint& c) {
  ChainState s;
  s.chain = c.chain;
  s.next_step = c.next_step;
  s.kept = c.kept;
  s.seconds = c.seconds;
  s.gradient_evals = c.gradient_evals;
  s.theta.assign(c.theta.data(), c.theta.data() + c.theta.size());
  s.state = c.state;
  s.status = chain_status_of(c.end);
  s.reason = c.reason;
  return s;
}

std::vector<std::int64_t> next_steps_of(const std::vector<ChainCheckpoint>& resume, int chains,
                                        std::int64_t& kept) {
  std::vector<std::int64_t> next_steps(static_cast<std::size_t>(chains), 0);
  kept = 0;
  for (std::size_t c = 0; c < resume.size() && c < next_steps.size(); ++c) {
    next_steps[c] = resume[c].next_step;
    kept += resume[c].kept;
  }
  return next_steps;
}

}  // namespace credence
