// RunReader: opens a run file (also one left by a crash) and reads its committed rows.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <limits>
#include <system_error>

#include "credence/ensemble.h"
#include "ensemble/bounded_read_driver.h"
#include "ensemble/h5_util.h"
#include "ensemble/layout.h"
#include "ensemble/run_file.h"
#include "util/log.h"

namespace credence {
using namespace credence::layout;

struct RunReader::Impl {
  std::string path;
  H5::H5File file;
  RunHeader header;
  RunSummary summary;
  run_file::Committed committed;

  // Set when validation finds damage; only an open in RunOpen::kReportDamage keeps it.
  Status damage;

  std::string context() const { return "reading run file " + path; }

  // Checks the stored tables against the header and the committed counts (shapes, the
  // chain of each sample, non-finite values), after run_file::validate_header_fields and validate_committed passed.
  // Returns the first damage found, naming dataset and index.
  Status check_tables() const {
    H5::Group samples = file.openGroup(kSamples);
    const std::int64_t s_rows = committed.samples;
    const auto check_shape = [&](const char* name, std::int64_t cols) -> Status {
      H5::DataSet set = samples.openDataSet(name);
      const std::int64_t found = h5::table_cols(set);
      if (cols >= 0 && found != cols) {
        return Status::corrupt(fmt::format("{}/{} has {} columns, the header says {}", kSamples,
                                           name, found, cols));
      }
      if (h5::table_rows(set) < s_rows) {
        return Status::corrupt(fmt::format("{}/{} has {} rows but {} samples are committed",
                                           kSamples, name, h5::table_rows(set), s_rows));
      }
      return Status::ok_status();
    };
    CREDENCE_RETURN_IF_ERROR(check_shape(kTheta, header.parameters));
    CREDENCE_RETURN_IF_ERROR(
        check_shape(kProbeProb, static_cast<std::int64_t>(header.probe_rows.size())));
    CREDENCE_RETURN_IF_ERROR(check_shape(kProjections, header.projections));
    CREDENCE_RETURN_IF_ERROR(check_shape(kLayerSqNorms, header.layers));
    for (const char* name : {kChain, kStep, kIndex, kProbeLogLik}) {
      CREDENCE_RETURN_IF_ERROR(check_shape(name, -1));
    }
    H5::Group traces = file.openGroup(kTraces);
    for (int c = 0; c < header.chains; ++c) {
      H5::Group chain = traces.openGroup(trace_group(c));
      const std::int64_t rows = committed.traces[static_cast<std::size_t>(c)];
      for (const char* name : kTraceTables) {
        const std::int64_t found = h5::table_rows(chain.openDataSet(name));
        if (found < rows) {
          return Status::corrupt(fmt::format("{}/{}/{} has {} rows but {} are committed", kTraces,
                                             trace_group(c), name, found, rows));
        }
      }
      // The potential of a traced step is finite (a diverging step ends the chain before
      // it is traced); accuracy, speed ratio and acceptance are NaN where they do not apply.
      std::vector<double> potential(static_cast<std::size_t>(rows));
      h5::read_rows(chain.openDataSet(kPotential), 0, rows, -1, potential.data(),
                    h5::Type<double>::mem());
      for (std::size_t i = 0; i < potential.size(); ++i) {
        if (!std::isfinite(potential[i])) {
          return Status::corrupt(fmt::format("{}/{}/{}[{}] is {}; a traced potential is finite",
                                             kTraces, trace_group(c), kPotential, i,
                                             potential[i]));
        }
      }
    }
    // Each sample's chain: inside the run, and the per-chain counts as committed.
    std::vector<std::int32_t> chains(static_cast<std::size_t>(s_rows));
    h5::read_rows(samples.openDataSet(kChain), 0, s_rows, -1, chains.data(),
                  h5::Type<std::int32_t>::mem());
    std::vector<std::int64_t> per_chain(static_cast<std::size_t>(header.chains), 0);
    for (std::size_t i = 0; i < chains.size(); ++i) {
      if (chains[i] < 0 || chains[i] >= header.chains) {
        return Status::corrupt(fmt::format("{}/{}[{}] is {}; the run has chains 0..{}", kSamples,
                                           kChain, i, chains[i], header.chains - 1));
      }
      ++per_chain[static_cast<std::size_t>(chains[i])];
    }
    for (std::size_t c = 0; c < per_chain.size(); ++c) {
      if (per_chain[c] != committed.samples_per_chain[c]) {
        return Status::corrupt(fmt::format(
            "{}/{} holds {} samples of chain {} but {}/{}/{}[{}] says {}", kSamples, kChain,
            per_chain[c], c, kCheckpoint, slot_group(committed.active_slot), kCommittedPerChain, c,
            committed.samples_per_chain[c]));
      }
    }
    std::vector<std::int64_t> numbers(static_cast<std::size_t>(s_rows));
    for (const char* name : {kIndex, kStep}) {
      h5::read_rows(samples.openDataSet(name), 0, s_rows, -1, numbers.data(),
                    h5::Type<std::int64_t>::mem());
      for (std::size_t i = 0; i < numbers.size(); ++i) {
        if (numbers[i] < 0) {
          return Status::corrupt(
              fmt::format("{}/{}[{}] is {}; it must be >= 0", kSamples, name, i, numbers[i]));
        }
      }
    }
    // Values: the chain driver never keeps a non-finite sample (src/samplers/chain.cc),
    // so one here is damage, and predict, assess and diagnose would print it.
    for (const auto& [name, cols] :
         {std::pair{kTheta, header.parameters},
          std::pair{kProbeProb, static_cast<std::int64_t>(header.probe_rows.size())},
          std::pair{kProjections, std::int64_t{header.projections}},
          std::pair{kLayerSqNorms, std::int64_t{header.layers}}}) {
      CREDENCE_RETURN_IF_ERROR(check_finite(samples.openDataSet(name), name, cols));
    }
    std::vector<double> log_lik(static_cast<std::size_t>(s_rows));
    h5::read_rows(samples.openDataSet(kProbeLogLik), 0, s_rows, -1, log_lik.data(),
                  h5::Type<double>::mem());
    for (std::size_t i = 0; i < log_lik.size(); ++i) {
      if (!std::isfinite(log_lik[i])) {
        return Status::corrupt(fmt::format("{}/{}[{}] is {}; kept values are finite", kSamples,
                                           kProbeLogLik, i, log_lik[i]));
      }
    }
    return Status::ok_status();
  }

  // The first non-finite value among the committed rows of a float table, read in
  // blocks of about 4 MiB so that a large ensemble is never held twice.
  Status check_finite(const H5::DataSet& set, const char* name, std::int64_t cols) const {
    if (cols <= 0 || committed.samples == 0) return Status::ok_status();
    const std::int64_t block = std::max<std::int64_t>(1, (std::int64_t{1} << 20) / cols);
    std::vector<float> values;
    for (std::int64_t first = 0; first < committed.samples; first += block) {
      const std::int64_t rows = std::min(block, committed.samples - first);
      values.resize(static_cast<std::size_t>(rows * cols));
      h5::read_rows(set, first, rows, cols, values.data(), h5::Type<float>::mem());
      for (std::size_t k = 0; k < values.size(); ++k) {
        if (std::isfinite(values[k])) continue;
        const auto at = static_cast<std::int64_t>(k);
        return Status::corrupt(fmt::format(
            "{}/{}[sample {}, column {}] is {}; kept samples are finite (the file is refused "
            "rather than predicting from part of it)",
            kSamples, name, first + at / cols, at % cols, values[k]));
      }
    }
    return Status::ok_status();
  }

  // Rows [0, S) of /samples/<name> into a (cols, S) column-major matrix.
  Result<Eigen::MatrixXf> read_matrix(const char* name, std::int64_t cols) const {
    Eigen::MatrixXf out;
    Status status = h5::guard(context(), StatusCode::kCorrupt, [&]() {
      out.resize(cols, committed.samples);  // inside guard(): a failed allocation is a Status
      H5::DataSet set = file.openGroup(kSamples).openDataSet(name);
      if (h5::table_cols(set) != std::max<std::int64_t>(cols, 0) && cols > 0) {
        return Status::corrupt(context() + ": samples/" + name + " has the wrong width");
      }
      if (cols > 0) {
        h5::read_rows(set, 0, committed.samples, cols, out.data(), h5::Type<float>::mem());
      }
      return Status::ok_status();
    });
    if (!status.ok()) return status;
    return out;
  }

  template <typename T>
  Result<std::vector<T>> read_sample_column(const char* name) const {
    std::vector<T> out;
    Status status = h5::guard(context(), StatusCode::kCorrupt, [&]() {
      out.resize(static_cast<std::size_t>(committed.samples));
      h5::read_rows(file.openGroup(kSamples).openDataSet(name), 0, committed.samples, -1, out.data(),
                    h5::Type<T>::mem());
      return Status::ok_status();
    });
    if (!status.ok()) return status;
    return out;
  }

  // Every chunk holding committed rows of `set` lies within the file's `bytes`.
  bool chunks_on_disk(const H5::DataSet& set, std::int64_t rows, std::uint64_t bytes) const {
    hsize_t chunk[2] = {1, 1};
    if (set.getCreatePlist().getChunk(2, chunk) < 1 || chunk[0] == 0) return false;
    for (hsize_t start = 0; start < static_cast<hsize_t>(rows); start += chunk[0]) {
      const hsize_t offset[2] = {start, 0};
      unsigned filters = 0;
      haddr_t address = HADDR_UNDEF;
      hsize_t size = 0;
      if (H5Dget_chunk_info_by_coord(set.getId(), offset, &filters, &address, &size) < 0 ||
          address == HADDR_UNDEF || address > bytes || size > bytes - address) {
        return false;
      }
    }
    return true;
  }

  // A killed writer's file may end short of its allocated space (HDF5 extends the file
  // to it only at a flush), which is harmless as long as every committed row was written
  // before the kill; a copy cut short is not. Returns the first table that reaches past
  // the end, or "" when none does.
  std::string table_past_end(std::uint64_t bytes) const {
    H5::Group samples = file.openGroup(kSamples);
    for (const char* name : kSampleTables) {
      if (!chunks_on_disk(samples.openDataSet(name), committed.samples, bytes)) {
        return std::string(kSamples) + "/" + name;
      }
    }
    // Optional: older files lack it.
    if (samples.nameExists(kPriorPrecision) &&
        !chunks_on_disk(samples.openDataSet(kPriorPrecision), committed.samples, bytes)) {
      return std::string(kSamples) + "/" + kPriorPrecision;
    }
    H5::Group traces = file.openGroup(kTraces);
    for (int c = 0; c < header.chains; ++c) {
      H5::Group chain = traces.openGroup(trace_group(c));
      const std::int64_t rows = committed.traces[static_cast<std::size_t>(c)];
      for (const char* name : kTraceTables) {
        if (!chunks_on_disk(chain.openDataSet(name), rows, bytes)) {
          return std::string(kTraces) + "/" + trace_group(c) + "/" + name;
        }
      }
    }
    return "";
  }

  // Reads one value at each table's last committed row, so a file cut short fails here
  // rather than later.
  void probe_last_rows() const {
    if (committed.samples > 0) {
      H5::Group samples = file.openGroup(kSamples);
      std::vector<float> row(static_cast<std::size_t>(header.parameters));
      h5::read_rows(samples.openDataSet(kTheta), committed.samples - 1, 1, header.parameters,
                    row.data(),
                    h5::Type<float>::mem());
      std::int64_t value = 0;
      h5::read_rows(samples.openDataSet(kStep), committed.samples - 1, 1, -1, &value,
                    h5::Type<std::int64_t>::mem());
    }
    H5::Group traces = file.openGroup(kTraces);
    for (int c = 0; c < header.chains; ++c) {
      const std::int64_t rows = committed.traces[static_cast<std::size_t>(c)];
      if (rows == 0) continue;
      double value = 0;
      h5::read_rows(traces.openGroup(trace_group(c)).openDataSet(kPotential), rows - 1, 1, -1,
                    &value,
                    h5::Type<double>::mem());
    }
  }
};

RunReader::RunReader(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
RunReader::~RunReader() = default;

const RunHeader& RunReader::header() const { return impl_->header; }
const RunSummary& RunReader::summary() const { return impl_->summary; }

const Status& RunReader::damage() const { return impl_->damage; }

Result<std::unique_ptr<RunReader>> RunReader::open(const std::string& path, RunOpen mode) {
  h5::silence_errors();
  const std::string context = "reading run file " + path;
  std::error_code error;
  if (!std::filesystem::exists(path, error)) {
    return Status::invalid_input(context + ": no such file; check the path");
  }
  if (!std::filesystem::is_regular_file(path, error)) {
    return Status::invalid_input(context + ": not a regular file; give the .h5 run file");
  }
  if (H5Fis_hdf5(path.c_str()) <= 0) {
    return Status::corrupt(context +
                           ": not an HDF5 file; give the .h5 file written by "
                           "'credence train'");
  }
  auto impl = std::make_unique<Impl>();
  impl->path = path;
  // A plain open fails on a file whose writer was killed (its superblock still says
  // "open for SWMR writing"); a SWMR-read open reads it without modifying it.
  bool recovered = false;
  hid_t id = H5Fopen(path.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT);
  if (id < 0) {
    hid_t fapl = H5Pcreate(H5P_FILE_ACCESS);
    H5Pset_libver_bounds(fapl, H5F_LIBVER_LATEST, H5F_LIBVER_LATEST);
    // SWMR readers retry a metadata block whose checksum fails (a writer may be
    // mid-flush), by default 100 times with growing pauses: minutes on a damaged
    // file. A live writer's flush settles within a few attempts.
    H5Pset_metadata_read_attempts(fapl, 10);
    // Such an open reads past the allocated end; the bounded driver keeps a damaged
    // length from zero-filling gigabytes there (bounded_read_driver.h).
    if (h5::use_bounded_read_driver(fapl) >= 0) {
      id = H5Fopen(path.c_str(), H5F_ACC_RDONLY | H5F_ACC_SWMR_READ, fapl);
    }
    H5Pclose(fapl);
    recovered = true;
  }
  if (id < 0) {
    return Status::corrupt(context +
                           ": the file is damaged or truncated (HDF5 cannot open "
                           "it); use an intact copy or train the run again");
  }
  impl->file = h5::adopt<H5::H5File>(id);
  // A SWMR-read open skips HDF5's end-of-file check and reads past the end as zeros,
  // so compare the allocated end (a cleanly closed file) or the committed rows' chunks
  // (a killed writer's file) with the bytes on disk here.
  haddr_t eoa = 0;
  const auto bytes = std::filesystem::file_size(path, error);
  const auto truncated = [&](const std::string& expected) {
    return Status::corrupt(context + ": the file is truncated (" + std::to_string(bytes) +
                           " bytes on disk, " + expected +
                           "); use an intact copy or train the run again");
  };
  if (!recovered && !error && H5Fget_eoa(id, &eoa) >= 0 && eoa > static_cast<haddr_t>(bytes)) {
    return truncated(std::to_string(eoa) + " expected");
  }
  // The validation pass (src/ensemble/validate.cc), before anything uses the file: the
  // header first, since the committed state is read with its sizes.
  constexpr const char* kAdvice =
      "the file is damaged or was not written by credence; use an intact copy or train the "
      "run again";
  const auto damaged = [&](const Status& found) {
    // A message of our own names the field; one through guard() carries the context.
    const bool own = found.message().rfind(context, 0) != 0;
    return Status::corrupt((own ? context + ": " : std::string()) + found.message() +
                           (own ? "; " + std::string(kAdvice) : std::string()));
  };
  Status header_damage;
  Status status = h5::guard(
      context, StatusCode::kCorrupt,
      [&]() {
        CREDENCE_RETURN_IF_ERROR(run_file::check_format(impl->file, path));
        impl->header = run_file::read_header(impl->file);
        header_damage = run_file::validate_header_fields(impl->header);
        if (!header_damage.ok() && mode == RunOpen::kRefuseDamage) return header_damage;
        impl->committed = run_file::read_committed(impl->file, impl->header);
        if (recovered && !error) {
          const std::string table = impl->table_past_end(bytes);
          if (!table.empty()) return truncated("committed rows of " + table + " lie beyond");
        }
        impl->probe_last_rows();
        RunSummary& s = impl->summary;
        s.status = run_file::read_run_status(impl->file);
        s.recovered = recovered;
        s.samples = impl->committed.samples;
        s.kept_per_chain = impl->committed.samples_per_chain;
        for (const ChainState& state : impl->committed.states) {
          s.chain_status.push_back(state.status);
          s.chain_reason.push_back(state.reason);
          s.steps_per_chain.push_back(state.next_step);
          if (impl->committed.costs_recorded) {
            s.seconds_per_chain.push_back(state.seconds);
            s.gradient_evals_per_chain.push_back(state.gradient_evals);
          }
        }
        return Status::ok_status();
      },
      kAdvice);
  // A damaged header explains whatever failed after it.
  if (!header_damage.ok()) {
    impl->damage = damaged(header_damage);
    if (!status.ok() || mode == RunOpen::kRefuseDamage) return impl->damage;
  }
  if (!status.ok()) return status;
  impl->summary.file_bytes = static_cast<std::int64_t>(std::filesystem::file_size(path, error));
  if (impl->damage.ok()) {
    Status damage = run_file::validate_committed(impl->committed);
    if (damage.ok()) {
      damage = h5::guard(context, StatusCode::kCorrupt,
                         [&]() { return impl->check_tables(); }, kAdvice);
    }
    if (!damage.ok()) {
      impl->damage = damaged(damage);
      if (mode == RunOpen::kRefuseDamage) return impl->damage;
    }
  }
  return std::unique_ptr<RunReader>(new RunReader(std::move(impl)));
}

Result<Eigen::MatrixXf> RunReader::samples() const {
  return impl_->read_matrix(kTheta, impl_->header.parameters);
}

Result<std::vector<std::int32_t>> RunReader::sample_chains() const {
  return impl_->read_sample_column<std::int32_t>(kChain);
}

Result<std::vector<std::int64_t>> RunReader::sample_steps() const {
  return impl_->read_sample_column<std::int64_t>(kStep);
}

Result<std::vector<std::int64_t>> RunReader::sample_indices() const {
  return impl_->read_sample_column<std::int64_t>(kIndex);
}

Result<std::vector<double>> RunReader::probe_log_lik() const {
  return impl_->read_sample_column<double>(kProbeLogLik);
}

Result<Eigen::MatrixXf> RunReader::probe_prob() const {
  return impl_->read_matrix(kProbeProb, static_cast<std::int64_t>(impl_->header.probe_rows.size()));
}

Result<Eigen::MatrixXf> RunReader::projections() const {
  return impl_->read_matrix(kProjections, impl_->header.projections);
}

Result<Eigen::MatrixXd> RunReader::prior_precisions() const {
  const std::int64_t rows = 2 * std::int64_t{impl_->header.layers};
  Eigen::MatrixXd out = Eigen::MatrixXd::Constant(rows, impl_->committed.samples,
                                                  std::numeric_limits<double>::quiet_NaN());
  Status status = h5::guard(impl_->context(), StatusCode::kCorrupt, [&]() {
    H5::Group group = impl_->file.openGroup(kSamples);
    if (!group.nameExists(kPriorPrecision) || rows == 0) return Status::ok_status();
    H5::DataSet set = group.openDataSet(kPriorPrecision);
    if (h5::table_cols(set) != rows) {
      return Status::corrupt(impl_->context() + ": samples/" + kPriorPrecision +
                             " has the wrong width");
    }
    h5::read_rows(set, 0, impl_->committed.samples, rows, out.data(), h5::Type<double>::mem());
    return Status::ok_status();
  });
  if (!status.ok()) return status;
  return out;
}

Result<Eigen::MatrixXf> RunReader::layer_sq_norms() const {
  return impl_->read_matrix(kLayerSqNorms, impl_->header.layers);
}

Result<std::vector<TraceRecord>> RunReader::traces(int chain) const {
  const Impl& m = *impl_;
  if (chain < 0 || chain >= m.header.chains) {
    return Status::invalid_input(m.context() + ": no chain " + std::to_string(chain) +
                                 " (the run has " + std::to_string(m.header.chains) + ")");
  }
  const std::int64_t rows = m.committed.traces[static_cast<std::size_t>(chain)];
  std::vector<TraceRecord> out;
  Status status = h5::guard(m.context(), StatusCode::kCorrupt, [&]() {
    out.resize(static_cast<std::size_t>(rows));
    H5::Group group = m.file.openGroup(kTraces).openGroup(trace_group(chain));
    std::vector<std::int64_t> step(out.size());
    h5::read_rows(group.openDataSet(kStep), 0, rows, -1, step.data(),
                  h5::Type<std::int64_t>::mem());
    std::vector<double> column(out.size());
    auto read = [&](const char* name, double TraceRecord::*field) {
      h5::read_rows(group.openDataSet(name), 0, rows, -1, column.data(), h5::Type<double>::mem());
      for (std::size_t i = 0; i < out.size(); ++i) out[i].*field = column[i];
    };
    read(kPotential, &TraceRecord::potential);
    read(kAccuracy, &TraceRecord::accuracy);
    read(kStepSize, &TraceRecord::step_size);
    read(kSpeedRatio, &TraceRecord::speed_ratio);
    read(kAcceptance, &TraceRecord::acceptance);
    for (std::size_t i = 0; i < out.size(); ++i) {
      out[i].chain = chain;
      out[i].step = step[i];
    }
    return Status::ok_status();
  });
  if (!status.ok()) return status;
  return out;
}

Result<std::vector<ChainState>> RunReader::chain_states() const { return impl_->committed.states; }

Result<std::optional<StoredTemperature>> RunReader::stored_temperature() const {
  const Impl& m = *impl_;
  std::optional<StoredTemperature> out;
  Status status = h5::guard(m.context(), StatusCode::kCorrupt, [&]() {
    if (!m.file.nameExists(kCalibration)) return Status::ok_status();
    H5::Group group = m.file.openGroup(kCalibration);
    StoredTemperature t;
    t.temperature = h5::read_attr_f64(group, kTemperature);
    t.samples = h5::read_attr_i64(group, kCommittedSamples);
    t.fitted_on = h5::read_attr_string(group, kFittedOn);
    t.nll_before = h5::read_attr_f64(group, kNllBefore);
    t.nll_after = h5::read_attr_f64(group, kNllAfter);
    t.fitted_utc = h5::read_attr_string(group, kFittedUtc);
    if (!(t.temperature > 0) || !std::isfinite(t.temperature)) {
      return Status::corrupt(m.context() + ": the stored temperature is not a positive number");
    }
    if (t.samples != m.committed.samples) {
      log().warn(
          "{}: ignoring the stored temperature {:.4g}: it was fitted for {} samples and "
          "the run now holds {}; fit it again with assess --temperature-scale",
          m.path, t.temperature, t.samples, m.committed.samples);
      return Status::ok_status();
    }
    out = std::move(t);
    return Status::ok_status();
  });
  if (!status.ok()) return status;
  return out;
}

Status store_temperature(const std::string& path, const StoredTemperature& temperature) {
  {
    Result<std::unique_ptr<RunReader>> check = RunReader::open(path);
    if (!check.ok()) return check.status();
    const RunSummary& summary = (*check)->summary();
    if (summary.recovered || summary.status == RunStatus::kRunning) {
      return Status::invalid_input("run file " + path +
                                   " is still being written or was left by a crash; finish "
                                   "it with train --resume before storing a temperature");
    }
  }
  return h5::guard("storing a temperature in " + path, StatusCode::kIoError, [&]() {
    H5::H5File file(path, H5F_ACC_RDWR);
    H5::Group group = file.nameExists(kCalibration) ? file.openGroup(kCalibration)
                                                    : file.createGroup(kCalibration);
    h5::write_attr(group, kTemperature, temperature.temperature);
    h5::write_attr(group, kCommittedSamples, temperature.samples);
    h5::write_attr(group, kFittedOn, temperature.fitted_on);
    h5::write_attr(group, kNllBefore, temperature.nll_before);
    h5::write_attr(group, kNllAfter, temperature.nll_after);
    h5::write_attr(group, kFittedUtc, temperature.fitted_utc);
    file.flush(H5F_SCOPE_GLOBAL);
    return Status::ok_status();
  });
}

}  // namespace credence
