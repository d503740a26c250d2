// open_on_root, check_same_data, put_job, get_job (mpi_job.h).
#include "run/mpi_job.h"

#include <fmt/format.h>

#include "run/resume.h"
#include "util/log.h"

namespace credence {

void put_job(wire::Packer& out, const PreparedRun& p, const std::vector<ChainState>& states) {
  wire::put_settings(out, p.header.settings);
  out.put_string(p.header.net_text);
  out.put(static_cast<std::int64_t>(p.header.preprocessing.input_width));
  out.put(static_cast<std::int64_t>(p.header.preprocessing.class_names.size()));
  out.put(static_cast<std::int32_t>(p.header.chains));
  out.put(static_cast<std::int64_t>(p.rows.x.rows()));
  out.put(static_cast<std::int64_t>(p.rows.x.cols()));
  const auto* bytes = reinterpret_cast<const char*>(p.rows.x.data());
  out.bytes().insert(out.bytes().end(), bytes,
                     bytes + static_cast<std::size_t>(p.rows.x.size()) * sizeof(float));
  out.put_vector(p.rows.labels);
  out.put(static_cast<std::int64_t>(p.held_out.x.cols()));
  const auto* held = reinterpret_cast<const char*>(p.held_out.x.data());
  out.bytes().insert(out.bytes().end(), held,
                     held + static_cast<std::size_t>(p.held_out.x.size()) * sizeof(float));
  out.put_vector(p.held_out.labels);
  out.put(static_cast<std::uint64_t>(states.size()));
  for (const ChainState& state : states) wire::put_chain_state(out, state);
}

Status get_job(wire::Unpacker& in, PreparedRun& p, std::vector<ChainState>& states) {
  const Status garbled = Status::internal("the job from rank 0 arrived garbled");
  std::int64_t width = 0, classes = 0, rows = 0, cols = 0;
  std::int32_t chains = 0;
  if (!wire::get_settings(in, p.header.settings) || !in.get_string(p.header.net_text) ||
      !in.get(width) || !in.get(classes) || !in.get(chains) || !in.get(rows) || !in.get(cols)) {
    return garbled;
  }
  std::vector<float> x(static_cast<std::size_t>(rows * cols));
  for (float& v : x) {
    if (!in.get(v)) return garbled;
  }
  p.rows.x = Eigen::Map<const Eigen::MatrixXf>(x.data(), rows, cols);
  std::int64_t held_cols = 0;
  if (!in.get_vector(p.rows.labels) || !in.get(held_cols) || held_cols < 0) return garbled;
  std::vector<float> held(static_cast<std::size_t>(rows * held_cols));
  for (float& v : held) {
    if (!in.get(v)) return garbled;
  }
  p.held_out.x = Eigen::Map<const Eigen::MatrixXf>(held.data(), rows, held_cols);
  std::uint64_t count = 0;
  if (!in.get_vector(p.held_out.labels) || !in.get(count)) return garbled;
  states.resize(static_cast<std::size_t>(count));
  for (ChainState& state : states) {
    if (!wire::get_chain_state(in, state)) return garbled;
  }
  if (!in.done()) return garbled;
  p.header.chains = chains;
  ReadOptions read;
  CREDENCE_RETURN_IF_ERROR(from_values(p.header.settings, p.settings, read));
  Result<NetSpec> spec = parse_net_text(p.header.net_text, "net text from rank 0");
  if (!spec.ok()) return spec.status();
  p.spec = *spec;
  Result<ParamLayout> layout =
      resolve_layout(p.spec, static_cast<Index>(width), static_cast<Index>(classes));
  if (!layout.ok()) return layout.status();
  p.layout = *layout;
  return Status::ok_status();
}

Status open_on_root(const TrainRequest& request, RootOpening& opened) {
  std::unique_ptr<RunWriter>& writer = opened.writer;
  PreparedRun& p = opened.prepared;
  std::string& data_path = opened.data_path;
  std::string& digest = opened.digest;
  if (request.resume_path.empty()) {
    data_path = request.data_path;
    if (data_path.empty()) return Status::invalid_input("give the data file: credence train DATA.csv ...");
    Result<std::string> d = file_sha256_hex(data_path);
    if (!d.ok()) return d.status();
    digest = *d;
    return Status::ok_status();
  }
  Result<std::unique_ptr<RunWriter>> reopened = RunWriter::reopen(request.resume_path, opened.states);
  if (!reopened.ok()) return reopened.status();
  writer = std::move(*reopened);
  Result<PreparedRun> prepared = prepare_resumed_run(writer->header(), request.data_path);
  if (!prepared.ok()) return prepared.status();
  p = std::move(*prepared);
  data_path = request.data_path.empty() ? p.header.data_file : request.data_path;
  digest = p.header.data_sha256;
  log().info("resuming {} chains from {}", opened.states.size(), request.resume_path);
  return Status::ok_status();
}

Status check_same_data(const mpi::World& world, const TrainRequest& request,
                       const std::string& root_path, const std::string& root_digest) {
  if (world.rank() == 0) return Status::ok_status();
  const std::string path = request.data_path.empty() ? root_path : request.data_path;
  Result<std::string> digest = file_sha256_hex(path);
  if (!digest.ok()) return digest.status();
  if (*digest != root_digest) {
    return Status::invalid_input(fmt::format(
        "{}: SHA-256 {} differs from rank 0's {} ({}); every rank must read the same data "
        "file: copy it to the same path on every host",
        path, *digest, root_digest, root_path));
  }
  return Status::ok_status();
}

}  // namespace credence
