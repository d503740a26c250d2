// RunWriter: creates a run file, appends rows in SWMR mode, commits through two slots.
#include <unistd.h>

#include <filesystem>
#include <limits>
#include <system_error>

#include "credence/ensemble.h"
#include "ensemble/copy_committed.h"
#include "ensemble/h5_util.h"
#include "ensemble/layout.h"
#include "ensemble/run_file.h"
#include "util/atomic_file.h"
#include "util/log.h"

namespace credence {
namespace {

using namespace credence::layout;

// Rows queued since the last commit, row-major like the file.
struct SampleQueue {
  std::vector<float> theta;         // (q, P)
  std::vector<std::int32_t> chain;  // (q)
  std::vector<std::int64_t> step;   // (q)
  std::vector<std::int64_t> index;  // (q)
  std::vector<double> log_lik;      // (q)
  std::vector<float> probe_prob;    // (q, R)
  std::vector<float> projections;   // (q, J)
  std::vector<float> norms;         // (q, L)
  std::vector<double> precision;    // (q, 2L)
  void clear() { *this = SampleQueue(); }
};

struct TraceQueue {
  std::vector<std::int64_t> step;
  std::vector<double> potential, accuracy, step_size, speed_ratio, acceptance;
};

// Same names and sizes as the template.
template <typename Map>
Status check_state_map(const Map& state, const Map& templ, int chain) {
  if (state.size() != templ.size()) {
    return Status::internal("chain " + std::to_string(chain) +
                            ": state arrays differ from the run header's state template");
  }
  for (const auto& [name, values] : templ) {
    auto found = state.find(name);
    if (found == state.end() || found->second.size() != values.size()) {
      return Status::internal("chain " + std::to_string(chain) + ": state array '" + name +
                              "' is missing or has the wrong size");
    }
  }
  return Status::ok_status();
}

// File access with the latest file format, which SWMR writing requires.
H5::FileAccPropList swmr_access() {
  H5::FileAccPropList fapl;
  fapl.setLibverBounds(H5F_LIBVER_LATEST, H5F_LIBVER_LATEST);
  return fapl;
}

// Paged file-space allocation, so that no metadata block smaller than a page straddles
// a 4 KiB boundary. kill -9 can cut a write() short only between the kernel's page-cache
// pages (which are 4 KiB-aligned), so such a block is either wholly old or wholly new
// on disk; with the default allocator a block across a boundary could be left half
// rewritten, its checksum stale, and the dataset unreadable (issue 9's kill tests).
H5::FileCreatPropList page_aligned_creation() {
  H5::FileCreatPropList fcpl;
  constexpr hsize_t kPageBytes = 4096;
  if (H5Pset_file_space_strategy(fcpl.getId(), H5F_FSPACE_STRATEGY_PAGE, 0, 1) < 0 ||
      H5Pset_file_space_page_size(fcpl.getId(), kPageBytes) < 0) {
    throw H5::PropListIException("page_aligned_creation", "cannot set paged allocation");
  }
  return fcpl;
}

}  // namespace

struct RunWriter::Impl {
  std::string path;
  RunHeader header;
  H5::H5File file;
  bool open = false;
  run_file::Committed committed;  // what the active slot says
  run_file::Committed pending;    // committed + queued state updates
  SampleQueue samples;
  std::vector<TraceQueue> traces;  // (C)

  // Enters SWMR writing; every object exists by now and no handle but the file is open.
  void start_swmr() {
    if (H5Fstart_swmr_write(file.getId()) < 0) {
      throw H5::FileIException("H5Fstart_swmr_write", "cannot start SWMR writing");
    }
  }

  void write_queued() {
    H5::Group group = file.openGroup(kSamples);
    const std::int64_t first = committed.samples;
    const auto q = static_cast<std::int64_t>(samples.chain.size());
    if (q > 0) {
      auto append = [&](const char* name, const void* data, const H5::DataType& type) {
        H5::DataSet set = group.openDataSet(name);
        h5::set_table_rows(set, first + q);
        h5::write_rows(set, first, q, data, type);
      };
      append(kTheta, samples.theta.data(), h5::Type<float>::mem());
      append(kChain, samples.chain.data(), h5::Type<std::int32_t>::mem());
      append(kStep, samples.step.data(), h5::Type<std::int64_t>::mem());
      append(kIndex, samples.index.data(), h5::Type<std::int64_t>::mem());
      append(kProbeLogLik, samples.log_lik.data(), h5::Type<double>::mem());
      append(kProbeProb, samples.probe_prob.data(), h5::Type<float>::mem());
      append(kProjections, samples.projections.data(), h5::Type<float>::mem());
      append(kLayerSqNorms, samples.norms.data(), h5::Type<float>::mem());
      // A file created before precisions were recorded has no such table.
      if (group.nameExists(kPriorPrecision)) {
        append(kPriorPrecision, samples.precision.data(), h5::Type<double>::mem());
      }
    }
    H5::Group trace_root = file.openGroup(kTraces);
    for (std::size_t c = 0; c < traces.size(); ++c) {
      TraceQueue& t = traces[c];
      const auto rows = static_cast<std::int64_t>(t.step.size());
      if (rows == 0) continue;
      H5::Group chain = trace_root.openGroup(trace_group(static_cast<int>(c)));
      const std::int64_t start = committed.traces[c];
      auto append = [&](const char* name, const void* data, const H5::DataType& type) {
        H5::DataSet set = chain.openDataSet(name);
        h5::set_table_rows(set, start + rows);
        h5::write_rows(set, start, rows, data, type);
      };
      append(kStep, t.step.data(), h5::Type<std::int64_t>::mem());
      append(kPotential, t.potential.data(), h5::Type<double>::mem());
      append(kAccuracy, t.accuracy.data(), h5::Type<double>::mem());
      append(kStepSize, t.step_size.data(), h5::Type<double>::mem());
      append(kSpeedRatio, t.speed_ratio.data(), h5::Type<double>::mem());
      append(kAcceptance, t.acceptance.data(), h5::Type<double>::mem());
    }
  }

  void flush() { file.flush(H5F_SCOPE_GLOBAL); }

  // The durable commit of the file comment: rows, flush, slot, flush, marker, flush.
  void commit() {
    write_queued();
    flush();
    pending.samples = committed.samples + static_cast<std::int64_t>(samples.chain.size());
    for (std::size_t c = 0; c < traces.size(); ++c) {
      pending.traces[c] = committed.traces[c] + static_cast<std::int64_t>(traces[c].step.size());
    }
    const int slot = committed.active_slot == 0 ? 1 : 0;
    run_file::write_slot(file, slot, header, pending);
    flush();
    run_file::write_active_slot(file, slot);
    flush();
    pending.active_slot = slot;
    committed = pending;
    samples.clear();
    for (TraceQueue& t : traces) t = TraceQueue();
  }
};

RunWriter::RunWriter(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}

RunWriter::~RunWriter() {
  if (impl_ && impl_->open) {
    try {
      impl_->file.close();
    } catch (const H5::Exception&) {
      log().warn("closing run file {} failed; the last commit is still valid", impl_->path);
    }
  }
}

const RunHeader& RunWriter::header() const { return impl_->header; }

std::int64_t RunWriter::committed_samples() const { return impl_->committed.samples; }

Result<std::unique_ptr<RunWriter>> RunWriter::create(const std::string& path,
                                                     const RunHeader& header, bool overwrite) {
  h5::silence_errors();
  CREDENCE_RETURN_IF_ERROR(run_file::validate_header(header));
  std::error_code error;
  if (std::filesystem::exists(path, error) && !overwrite) {
    return Status::invalid_input("run file " + path +
                                 " already exists; choose another --out or pass --force to "
                                 "replace it");
  }
  // The file is built under a temporary name and renamed into place only once it is
  // in SWMR mode, so `path` never names a half-created file, even after kill -9 (and
  // with --force the old run stays intact until the new one can replace it).
  remove_stale_temporaries(path, "partial");  // left by a train or merge that was killed
  const std::string building = temporary_path(path, "partial");
  auto impl = std::make_unique<Impl>();
  impl->path = path;
  impl->header = header;
  const auto chains = static_cast<std::size_t>(header.chains);
  impl->traces.resize(chains);
  const std::string context =
      "creating run file " + path + " (check that its folder exists and is writable)";
  Status status = h5::guard(context, StatusCode::kIoError, [&]() {
    impl->file = H5::H5File(building, H5F_ACC_TRUNC, page_aligned_creation(), swmr_access());
    impl->open = true;
    run_file::write_header(impl->file, header);
    run_file::create_tables(impl->file, header);
    impl->committed = run_file::read_committed(impl->file, header);
    impl->pending = impl->committed;
    impl->start_swmr();
    impl->flush();
    std::filesystem::rename(building, path, error);
    if (error) {
      return Status::io_error("cannot move " + building + " to " + path + ": " + error.message());
    }
    return Status::ok_status();
  });
  if (!status.ok()) {
    if (impl->open) {
      try {
        impl->file.close();
      } catch (const H5::Exception&) {
      }
      impl->open = false;
    }
    std::filesystem::remove(building, error);  // no half-written output
    return status;
  }
  return std::unique_ptr<RunWriter>(new RunWriter(std::move(impl)));
}

Result<std::unique_ptr<RunWriter>> RunWriter::reopen(const std::string& path,
                                                     std::vector<ChainState>& states) {
  // Validate read-only first, so a foreign or damaged file is never opened for writing.
  {
    Result<std::unique_ptr<RunReader>> check = RunReader::open(path);
    if (!check.ok()) return check.status();
    if ((*check)->summary().recovered) return rebuild(std::move(*check), path, states);
  }
  auto impl = std::make_unique<Impl>();
  impl->path = path;
  Status status =
      h5::guard("resuming run file " + path + ": the file is damaged", StatusCode::kCorrupt, [&]() {
        // The file was closed cleanly (a killed writer's file is rebuilt instead). It is
        // opened straight into SWMR writing, so there is no moment in which a kill could
        // catch it open for plain writing.
        impl->file = H5::H5File(path, H5F_ACC_RDWR | H5F_ACC_SWMR_WRITE,
                                H5::FileCreatPropList::DEFAULT, swmr_access());
        impl->open = true;
        CREDENCE_RETURN_IF_ERROR(run_file::check_format(impl->file, path));
        impl->header = run_file::read_header(impl->file);
        if (run_file::read_run_status(impl->file) == RunStatus::kComplete) {
          return Status::invalid_input("run file " + path +
                                       " is already complete; there is nothing to resume");
        }
        impl->committed = run_file::read_committed(impl->file, impl->header);
        impl->pending = impl->committed;
        // Rows past the committed counts are left in place: appends overwrite them from
        // the counts on (tables only ever grow, as SWMR requires).
        H5::Group group = impl->file.openGroup(kSamples);
        std::vector<const char*> tables(kSampleTables.begin(), kSampleTables.end());
        if (group.nameExists(kPriorPrecision)) tables.push_back(kPriorPrecision);  // optional
        for (const char* name : tables) {
          H5::DataSet set = group.openDataSet(name);
          if (h5::table_rows(set) < impl->committed.samples) {
            return Status::corrupt("resuming run file " + path + ": samples/" + name +
                                   " holds fewer rows than committed");
          }
        }
        H5::Group traces = impl->file.openGroup(kTraces);
        for (int c = 0; c < impl->header.chains; ++c) {
          H5::Group chain = traces.openGroup(trace_group(c));
          const std::int64_t rows = impl->committed.traces[static_cast<std::size_t>(c)];
          for (const char* name : kTraceTables) {
            H5::DataSet set = chain.openDataSet(name);
            if (h5::table_rows(set) < rows) {
              return Status::corrupt("resuming run file " + path + ": trace rows are missing");
            }
          }
        }
        run_file::write_run_status(impl->file, RunStatus::kRunning);
        impl->flush();
        return Status::ok_status();
      });
  if (!status.ok()) return status;
  impl->traces.resize(static_cast<std::size_t>(impl->header.chains));
  states = impl->committed.states;
  return std::unique_ptr<RunWriter>(new RunWriter(std::move(impl)));
}

// A killed writer's file is only ever read: after a kill, the superblock's end of
// allocated space can lag chunks that the flushed indexes already name, so writing in
// place could fail on them or allocate over them. The committed rows go into a fresh
// file, built under a temporary name and renamed over the old one once committed; a
// kill during the rebuild leaves the old file as it was.
Result<std::unique_ptr<RunWriter>> RunWriter::rebuild(std::unique_ptr<RunReader> run,
                                                      const std::string& path,
                                                      std::vector<ChainState>& states) {
  if (run->summary().status == RunStatus::kComplete) {
    return Status::invalid_input("run file " + path +
                                 " is already complete; there is nothing to resume");
  }
  remove_stale_temporaries(path, "rebuild");  // left by a resume that was killed
  const std::string temp = temporary_path(path, "rebuild");
  Result<std::unique_ptr<RunWriter>> writer = RunWriter::create(temp, run->header(), true);
  if (!writer.ok()) return writer.status();
  Status status = run_file::copy_committed(*run, **writer, 0);
  run.reset();
  std::error_code error;
  if (status.ok()) {
    std::filesystem::rename(temp, path, error);
    if (error) {
      status = Status::io_error("resuming run file " + path + ": cannot move " + temp +
                                " into its place: " + error.message());
    }
  }
  if (!status.ok()) {
    writer->reset();
    std::filesystem::remove(temp, error);
    return status;
  }
  Impl& m = *(*writer)->impl_;
  m.path = path;
  states = m.committed.states;
  return std::move(*writer);
}

Status RunWriter::append_sample(const SampleRecord& sample) {
  Impl& m = *impl_;
  const RunHeader& h = m.header;
  if (!m.open) return Status::internal("append_sample on a finished run file " + m.path);
  if (sample.chain < 0 || sample.chain >= h.chains ||
      static_cast<std::int64_t>(sample.theta.size()) != h.parameters ||
      sample.probe_prob.size() != h.probe_rows.size() ||
      static_cast<int>(sample.projections.size()) != h.projections ||
      static_cast<int>(sample.layer_sq_norms.size()) != h.layers ||
      (!sample.prior_precision.empty() &&
       static_cast<int>(sample.prior_precision.size()) != 2 * h.layers)) {
    return Status::internal("append_sample: chain or sizes do not match the run header");
  }
  SampleQueue& q = m.samples;
  q.theta.insert(q.theta.end(), sample.theta.begin(), sample.theta.end());
  q.chain.push_back(sample.chain);
  q.step.push_back(sample.step);
  q.index.push_back(sample.index);
  q.log_lik.push_back(sample.probe_log_lik);
  q.probe_prob.insert(q.probe_prob.end(), sample.probe_prob.begin(), sample.probe_prob.end());
  q.projections.insert(q.projections.end(), sample.projections.begin(), sample.projections.end());
  q.norms.insert(q.norms.end(), sample.layer_sq_norms.begin(), sample.layer_sq_norms.end());
  if (sample.prior_precision.empty()) {
    q.precision.insert(q.precision.end(), static_cast<std::size_t>(2 * h.layers),
                       std::numeric_limits<double>::quiet_NaN());
  } else {
    q.precision.insert(q.precision.end(), sample.prior_precision.begin(),
                       sample.prior_precision.end());
  }
  ++m.pending.samples_per_chain[static_cast<std::size_t>(sample.chain)];
  return Status::ok_status();
}

Status RunWriter::append_trace(const TraceRecord& trace) {
  Impl& m = *impl_;
  if (!m.open) return Status::internal("append_trace on a finished run file " + m.path);
  if (trace.chain < 0 || trace.chain >= m.header.chains) {
    return Status::internal("append_trace: chain out of range");
  }
  TraceQueue& t = m.traces[static_cast<std::size_t>(trace.chain)];
  t.step.push_back(trace.step);
  t.potential.push_back(trace.potential);
  t.accuracy.push_back(trace.accuracy);
  t.step_size.push_back(trace.step_size);
  t.speed_ratio.push_back(trace.speed_ratio);
  t.acceptance.push_back(trace.acceptance);
  return Status::ok_status();
}

Status RunWriter::set_chain_state(ChainState state) {
  Impl& m = *impl_;
  const RunHeader& h = m.header;
  if (!m.open) return Status::internal("set_chain_state on a finished run file " + m.path);
  if (state.chain < 0 || state.chain >= h.chains ||
      static_cast<std::int64_t>(state.theta.size()) != h.parameters) {
    return Status::internal("set_chain_state: chain or theta size does not match the run header");
  }
  const NamedArrays& t = h.state_template;
  CREDENCE_RETURN_IF_ERROR(check_state_map(state.state.floats, t.floats, state.chain));
  CREDENCE_RETURN_IF_ERROR(check_state_map(state.state.doubles, t.doubles, state.chain));
  CREDENCE_RETURN_IF_ERROR(check_state_map(state.state.words, t.words, state.chain));
  const auto c = static_cast<std::size_t>(state.chain);
  m.pending.has_state[c] = true;
  m.pending.states[c] = std::move(state);
  return Status::ok_status();
}

Status RunWriter::commit() {
  Impl& m = *impl_;
  if (!m.open) return Status::internal("commit on a finished run file " + m.path);
  return h5::guard("writing run file " + m.path, StatusCode::kIoError, [&m]() {
    m.commit();
    return Status::ok_status();
  });
}

Status RunWriter::finish(RunStatus status) {
  Impl& m = *impl_;
  if (!m.open) return Status::internal("finish on a finished run file " + m.path);
  Status result = h5::guard("finishing run file " + m.path, StatusCode::kIoError, [&m, status]() {
    m.commit();
    run_file::write_run_status(m.file, status);
    m.flush();
    m.file.close();  // a clean close ends SWMR writing and clears the superblock flags
    m.open = false;
    return Status::ok_status();
  });
  return result;
}

}  // namespace credence
