// Sample and trace tables, the two checkpoint slots, the active-slot marker, run status.
#include <algorithm>
#include <limits>
#include <string>

#include "ensemble/h5_util.h"
#include "ensemble/layout.h"
#include "ensemble/run_file.h"

namespace credence {

std::string_view run_status_name(RunStatus status) {
  switch (status) {
    case RunStatus::kRunning:
      return "running";
    case RunStatus::kComplete:
      return "complete";
    case RunStatus::kInterrupted:
      return "interrupted";
    case RunStatus::kDiverged:
      return "diverged";
    case RunStatus::kFailed:
      return "failed";
  }
  return "unknown";
}

std::string_view chain_status_name(ChainStatus status) {
  switch (status) {
    case ChainStatus::kRunning:
      return "running";
    case ChainStatus::kCompleted:
      return "completed";
    case ChainStatus::kDiverged:
      return "diverged";
    case ChainStatus::kStopped:
      return "stopped";
    case ChainStatus::kFailed:
      return "failed";
  }
  return "unknown";
}

namespace run_file {
namespace {

using namespace credence::layout;

template <typename T>
void write_all(H5::Group& group, const char* name, const std::vector<T>& values) {
  if (!values.empty()) group.openDataSet(name).write(values.data(), h5::Type<T>::mem());
}

template <typename T>
std::vector<T> read_exact(const H5::Group& group, const char* name, std::size_t count) {
  std::vector<T> values = h5::read_array<T>(group, name);
  if (values.size() != count) {
    throw h5::FileDamage("read_committed",
                         std::string("checkpoint array '") + name + "' has the wrong size");
  }
  return values;
}

// Creates state/<kind>/<name> as (C, n) for every array of the template.
template <typename Map>
void create_state_arrays(H5::Group& state, const char* kind, const Map& arrays,
                         const H5::DataType& type, int chains) {
  H5::Group group = state.createGroup(kind);
  for (const auto& [name, values] : arrays) {
    h5::create_fixed(group, name.c_str(), type, chains, static_cast<std::int64_t>(values.size()));
  }
}

// Writes every chain's array `name` of one kind as one (C, n) block.
template <typename T, typename Map, typename Get>
void write_state_arrays(H5::Group& state, const char* kind, const Map& arrays,
                        const Committed& committed, Get get) {
  H5::Group group = state.openGroup(kind);
  for (const auto& [name, template_values] : arrays) {
    const std::size_t n = template_values.size();
    if (n == 0) continue;
    std::vector<T> block(committed.states.size() * n, T{});
    for (std::size_t c = 0; c < committed.states.size(); ++c) {
      if (!committed.has_state[c]) continue;
      const auto& map = get(committed.states[c].state);
      auto found = map.find(name);
      if (found != map.end() && found->second.size() == n) {
        std::copy(found->second.begin(), found->second.end(),
                  block.begin() + static_cast<std::ptrdiff_t>(c * n));
      }
    }
    group.openDataSet(name).write(block.data(), h5::Type<T>::mem());
  }
}

template <typename T, typename Map, typename Get>
void read_state_arrays(const H5::Group& state, const char* kind, const Map& arrays,
                       Committed& committed, Get get) {
  H5::Group group = state.openGroup(kind);
  const std::size_t chains = committed.states.size();
  for (const auto& [name, template_values] : arrays) {
    const std::size_t n = template_values.size();
    std::vector<T> block =
        n == 0 ? std::vector<T>() : read_exact<T>(group, name.c_str(), chains * n);
    for (std::size_t c = 0; c < chains; ++c) {
      if (!committed.has_state[c]) continue;
      get(committed.states[c].state)[name].assign(
          block.begin() + static_cast<std::ptrdiff_t>(c * n),
          block.begin() + static_cast<std::ptrdiff_t>((c + 1) * n));
    }
  }
}

}  // namespace

std::int64_t theta_chunk_rows(std::int64_t parameters) {
  return std::max<std::int64_t>(1, kThetaChunkBytes / (4 * std::max<std::int64_t>(1, parameters)));
}

void create_tables(H5::H5File& file, const RunHeader& header) {
  const std::int64_t p = header.parameters;
  const auto narrow = [](std::int64_t cols) {
    return std::min(kNarrowChunkRows, theta_chunk_rows(cols));
  };
  H5::Group samples = file.createGroup(kSamples);
  h5::create_table(samples, kTheta, h5::Type<float>::file(), p, theta_chunk_rows(p));
  h5::create_table(samples, kChain, h5::Type<std::int32_t>::file(), -1, kNarrowChunkRows);
  h5::create_table(samples, kStep, h5::Type<std::int64_t>::file(), -1, kNarrowChunkRows);
  h5::create_table(samples, kIndex, h5::Type<std::int64_t>::file(), -1, kNarrowChunkRows);
  h5::create_table(samples, kProbeLogLik, h5::Type<double>::file(), -1, kNarrowChunkRows);
  const auto r = static_cast<std::int64_t>(header.probe_rows.size());
  h5::create_table(samples, kProbeProb, h5::Type<float>::file(), r, narrow(r));
  h5::create_table(samples, kProjections, h5::Type<float>::file(), header.projections,
                   narrow(header.projections));
  h5::create_table(samples, kLayerSqNorms, h5::Type<float>::file(), header.layers,
                   narrow(header.layers));
  h5::create_table(samples, kPriorPrecision, h5::Type<double>::file(), 2 * header.layers,
                   narrow(2 * header.layers));

  H5::Group traces = file.createGroup(kTraces);
  for (int c = 0; c < header.chains; ++c) {
    H5::Group chain = traces.createGroup(trace_group(c));
    h5::create_table(chain, kStep, h5::Type<std::int64_t>::file(), -1, kNarrowChunkRows);
    for (const char* name : {kPotential, kAccuracy, kStepSize, kSpeedRatio, kAcceptance}) {
      h5::create_table(chain, name, h5::Type<double>::file(), -1, kNarrowChunkRows);
    }
  }

  H5::Group checkpoint = file.createGroup(kCheckpoint);
  const int chains = header.chains;
  for (int slot = 0; slot < 2; ++slot) {
    H5::Group group = checkpoint.createGroup(slot_group(slot));
    h5::create_fixed(group, kCommittedSamples, h5::Type<std::int64_t>::file(), 1);
    h5::create_fixed(group, kCommittedPerChain, h5::Type<std::int64_t>::file(), chains);
    h5::create_fixed(group, kCommittedTraces, h5::Type<std::int64_t>::file(), chains);
    h5::create_fixed(group, kHasState, h5::Type<std::int8_t>::file(), chains);
    h5::create_fixed(group, kNextStep, h5::Type<std::int64_t>::file(), chains);
    h5::create_fixed(group, kKept, h5::Type<std::int64_t>::file(), chains);
    h5::create_fixed(group, kSeconds, h5::Type<double>::file(), chains);
    h5::create_fixed(group, kGradientEvals, h5::Type<std::int64_t>::file(), chains);
    h5::create_fixed(group, kStatus, h5::fixed_string_type(kStatusBytes), chains);
    h5::create_fixed(group, kReason, h5::fixed_string_type(kReasonBytes), chains);
    h5::create_fixed(group, kTheta, h5::Type<float>::file(), chains, p);
    H5::Group state = group.createGroup(kState);
    const NamedArrays& t = header.state_template;
    create_state_arrays(state, kFloats, t.floats, h5::Type<float>::file(), chains);
    create_state_arrays(state, kDoubles, t.doubles, h5::Type<double>::file(), chains);
    create_state_arrays(state, kWords, t.words, h5::Type<std::uint64_t>::file(), chains);
    // Both slots start as a valid "nothing committed" checkpoint.
    Committed empty;
    empty.samples_per_chain.assign(static_cast<std::size_t>(chains), 0);
    empty.traces.assign(static_cast<std::size_t>(chains), 0);
    empty.has_state.assign(static_cast<std::size_t>(chains), false);
    empty.states.resize(static_cast<std::size_t>(chains));
    write_slot(file, slot, header, empty);
  }

  H5::Group run = file.createGroup(kRun);
  h5::create_fixed(run, kRunStatus, h5::fixed_string_type(kStatusBytes), 1);
  h5::create_fixed(run, kActiveSlot, h5::Type<std::int32_t>::file(), 1);
  write_run_status(file, RunStatus::kRunning);
  write_active_slot(file, -1);
}

void write_slot(H5::H5File& file, int slot, const RunHeader& header, const Committed& committed) {
  H5::Group group = file.openGroup(kCheckpoint).openGroup(slot_group(slot));
  const std::size_t chains = committed.states.size();
  std::vector<std::int8_t> has_state(chains);
  std::vector<std::int64_t> next_step(chains), kept(chains), gradient_evals(chains);
  std::vector<double> seconds(chains);
  std::vector<std::string> status(chains), reason(chains);
  const auto p = static_cast<std::size_t>(header.parameters);
  std::vector<float> theta(chains * p, 0.0f);
  for (std::size_t c = 0; c < chains; ++c) {
    const ChainState& state = committed.states[c];
    has_state[c] = committed.has_state[c] ? 1 : 0;
    next_step[c] = state.next_step;
    kept[c] = state.kept;
    seconds[c] = state.seconds;
    gradient_evals[c] = state.gradient_evals;
    status[c] = chain_status_name(state.status);
    reason[c] = state.reason;
    if (committed.has_state[c] && state.theta.size() == p) {
      std::copy(state.theta.begin(), state.theta.end(),
                theta.begin() + static_cast<std::ptrdiff_t>(c * p));
    }
  }
  write_all(group, kCommittedSamples, std::vector<std::int64_t>{committed.samples});
  write_all(group, kCommittedPerChain, committed.samples_per_chain);
  write_all(group, kCommittedTraces, committed.traces);
  write_all(group, kHasState, has_state);
  write_all(group, kNextStep, next_step);
  write_all(group, kKept, kept);
  if (group.nameExists(kSeconds)) {  // files of an earlier build lack them
    write_all(group, kSeconds, seconds);
    write_all(group, kGradientEvals, gradient_evals);
  }
  H5::DataSet status_set = group.openDataSet(kStatus);
  h5::write_fixed_strings(status_set, kStatusBytes, status);
  H5::DataSet reason_set = group.openDataSet(kReason);
  h5::write_fixed_strings(reason_set, kReasonBytes, reason);
  write_all(group, kTheta, theta);
  H5::Group state = group.openGroup(kState);
  const NamedArrays& t = header.state_template;
  write_state_arrays<float>(
      state, kFloats, t.floats, committed,
      [](const NamedArrays& a) -> const auto& { return a.floats; });
  write_state_arrays<double>(
      state, kDoubles, t.doubles, committed,
      [](const NamedArrays& a) -> const auto& { return a.doubles; });
  write_state_arrays<std::uint64_t>(
      state, kWords, t.words, committed,
      [](const NamedArrays& a) -> const auto& { return a.words; });
}

void write_active_slot(H5::H5File& file, int slot) {
  const std::int32_t value = slot;
  file.openGroup(kRun).openDataSet(kActiveSlot).write(&value, h5::Type<std::int32_t>::mem());
}

Committed read_committed(const H5::H5File& file, const RunHeader& header) {
  const auto chains = static_cast<std::size_t>(header.chains);
  Committed committed;
  committed.samples_per_chain.assign(chains, 0);
  committed.traces.assign(chains, 0);
  committed.has_state.assign(chains, false);
  committed.states.resize(chains);
  for (std::size_t c = 0; c < chains; ++c) committed.states[c].chain = static_cast<int>(c);
  H5::Group run = file.openGroup(kRun);
  std::vector<std::int32_t> active = read_exact<std::int32_t>(run, kActiveSlot, 1);
  if (active[0] == -1) return committed;
  if (active[0] != 0 && active[0] != 1) {
    throw h5::FileDamage("read_committed", "the active slot marker is neither -1, 0 nor 1");
  }
  committed.active_slot = active[0];
  H5::Group group = file.openGroup(kCheckpoint).openGroup(slot_group(active[0]));
  committed.samples = read_exact<std::int64_t>(group, kCommittedSamples, 1)[0];
  committed.samples_per_chain = read_exact<std::int64_t>(group, kCommittedPerChain, chains);
  committed.traces = read_exact<std::int64_t>(group, kCommittedTraces, chains);
  std::vector<std::int8_t> has_state = read_exact<std::int8_t>(group, kHasState, chains);
  std::vector<std::int64_t> next_step = read_exact<std::int64_t>(group, kNextStep, chains);
  std::vector<std::int64_t> kept = read_exact<std::int64_t>(group, kKept, chains);
  committed.costs_recorded = group.nameExists(kSeconds) && group.nameExists(kGradientEvals);
  std::vector<double> seconds = committed.costs_recorded
                                    ? read_exact<double>(group, kSeconds, chains)
                                    : std::vector<double>(chains, 0.0);
  std::vector<std::int64_t> gradient_evals =
      committed.costs_recorded ? read_exact<std::int64_t>(group, kGradientEvals, chains)
                               : std::vector<std::int64_t>(chains, 0);
  std::vector<std::string> status = h5::read_fixed_strings(group.openDataSet(kStatus));
  std::vector<std::string> reason = h5::read_fixed_strings(group.openDataSet(kReason));
  const auto p = static_cast<std::size_t>(header.parameters);
  std::vector<float> theta = read_exact<float>(group, kTheta, chains * p);
  if (status.size() != chains || reason.size() != chains) {
    throw h5::FileDamage("read_committed", "chain status arrays have the wrong size");
  }
  std::int64_t total = 0;
  for (std::size_t c = 0; c < chains; ++c) {
    ChainState& state = committed.states[c];
    committed.has_state[c] = has_state[c] != 0;
    std::optional<ChainStatus> parsed = parse_chain_status(status[c]);
    if (!parsed) throw h5::FileDamage("read_committed", "unknown chain status '" + status[c] + "'");
    state.status = *parsed;
    state.reason = reason[c];
    if (committed.samples_per_chain[c] < 0 || committed.traces[c] < 0) {
      throw h5::FileDamage("read_committed", "negative committed row count");
    }
    // Counts are non-negative here, so comparing with what is left cannot overflow.
    if (committed.samples_per_chain[c] > std::numeric_limits<std::int64_t>::max() - total) {
      throw h5::FileDamage("read_committed", "per-chain sample counts do not add up");
    }
    total += committed.samples_per_chain[c];
    if (!committed.has_state[c]) continue;
    state.next_step = next_step[c];
    state.kept = kept[c];
    state.seconds = seconds[c];
    state.gradient_evals = gradient_evals[c];
    state.theta.assign(theta.begin() + static_cast<std::ptrdiff_t>(c * p),
                       theta.begin() + static_cast<std::ptrdiff_t>((c + 1) * p));
  }
  if (total != committed.samples) {
    throw h5::FileDamage("read_committed", "per-chain sample counts do not add up");
  }
  H5::Group state = group.openGroup(kState);
  const NamedArrays& t = header.state_template;
  read_state_arrays<float>(
      state, kFloats, t.floats, committed, [](NamedArrays & a) -> auto& { return a.floats; });
  read_state_arrays<double>(
      state, kDoubles, t.doubles, committed, [](NamedArrays & a) -> auto& { return a.doubles; });
  read_state_arrays<std::uint64_t>(
      state, kWords, t.words, committed, [](NamedArrays & a) -> auto& { return a.words; });
  return committed;
}

void write_run_status(H5::H5File& file, RunStatus status) {
  H5::DataSet set = file.openGroup(kRun).openDataSet(kRunStatus);
  h5::write_fixed_strings(set, kStatusBytes, {std::string(run_status_name(status))});
}

RunStatus read_run_status(const H5::H5File& file) {
  std::vector<std::string> names =
      h5::read_fixed_strings(file.openGroup(kRun).openDataSet(kRunStatus));
  std::optional<RunStatus> status = names.size() == 1 ? parse_run_status(names[0]) : std::nullopt;
  if (!status) throw h5::FileDamage("read_run_status", "unknown run status");
  return *status;
}

std::optional<RunStatus> parse_run_status(const std::string& name) {
  for (RunStatus s : {RunStatus::kRunning, RunStatus::kComplete, RunStatus::kInterrupted,
                      RunStatus::kDiverged, RunStatus::kFailed}) {
    if (run_status_name(s) == name) return s;
  }
  return std::nullopt;
}

std::optional<ChainStatus> parse_chain_status(const std::string& name) {
  for (ChainStatus s : {ChainStatus::kRunning, ChainStatus::kCompleted, ChainStatus::kDiverged,
                        ChainStatus::kStopped, ChainStatus::kFailed}) {
    if (chain_status_name(s) == name) return s;
  }
  return std::nullopt;
}

}  // namespace run_file
}  // namespace credence
