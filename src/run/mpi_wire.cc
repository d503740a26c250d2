// Byte images of the MPI training run's messages (see mpi_wire.h).
#include "run/mpi_wire.h"

namespace credence::wire {
namespace {

enum class Kind : std::uint8_t { kTrace = 1, kSample = 2, kState = 3 };

template <typename T>
void put_map(Packer& out, const std::map<std::string, std::vector<T>>& map) {
  out.put(static_cast<std::uint64_t>(map.size()));
  for (const auto& [name, values] : map) {
    out.put_string(name);
    out.put_vector(values);
  }
}

template <typename T>
bool get_map(Unpacker& in, std::map<std::string, std::vector<T>>& map) {
  std::uint64_t n = 0;
  if (!in.get(n)) return false;
  map.clear();
  for (std::uint64_t i = 0; i < n; ++i) {
    std::string name;
    std::vector<T> values;
    if (!in.get_string(name) || !in.get_vector(values)) return false;
    map.emplace(std::move(name), std::move(values));
  }
  return true;
}

}  // namespace

void put_status(Packer& out, const Status& status) {
  out.put(static_cast<std::int32_t>(status.code()));
  out.put_string(status.message());
}

bool get_status(Unpacker& in, Status& status) {
  std::int32_t code = 0;
  std::string message;
  if (!in.get(code) || !in.get_string(message)) return false;
  status = code == 0 ? Status() : Status(static_cast<StatusCode>(code), std::move(message));
  return true;
}

void put_chain_state(Packer& out, const ChainState& s) {
  out.put(static_cast<std::int32_t>(s.chain));
  out.put(s.next_step);
  out.put(s.kept);
  out.put(s.seconds);
  out.put(s.gradient_evals);
  out.put_vector(s.theta);
  put_map(out, s.state.floats);
  put_map(out, s.state.doubles);
  put_map(out, s.state.words);
  out.put(static_cast<std::int32_t>(s.status));
  out.put_string(s.reason);
}

bool get_chain_state(Unpacker& in, ChainState& s) {
  std::int32_t chain = 0, status = 0;
  const bool ok = in.get(chain) && in.get(s.next_step) && in.get(s.kept) && in.get(s.seconds) &&
                  in.get(s.gradient_evals) && in.get_vector(s.theta) &&
                  get_map(in, s.state.floats) && get_map(in, s.state.doubles) &&
                  get_map(in, s.state.words) && in.get(status) && in.get_string(s.reason);
  s.chain = chain;
  s.status = static_cast<ChainStatus>(status);
  return ok;
}

void put_message(Packer& out, const ChainMessage& message) {
  if (const auto* trace = std::get_if<TraceRecord>(&message)) {
    out.put(Kind::kTrace);
    out.put(*trace);
  } else if (const auto* sample = std::get_if<SampleMessage>(&message)) {
    out.put(Kind::kSample);
    out.put(static_cast<std::int32_t>(sample->chain));
    out.put(sample->step);
    out.put(sample->index);
    out.put(static_cast<std::uint64_t>(sample->theta.size()));
    const auto* bytes = reinterpret_cast<const char*>(sample->theta.data());
    out.bytes().insert(out.bytes().end(), bytes,
                       bytes + static_cast<std::size_t>(sample->theta.size()) * sizeof(float));
    out.put_vector(sample->prior_precision);
  } else {
    out.put(Kind::kState);
    put_chain_state(out, std::get<ChainState>(message));
  }
}

bool get_message(Unpacker& in, ChainMessage& message) {
  Kind kind{};
  if (!in.get(kind)) return false;
  switch (kind) {
    case Kind::kTrace: {
      TraceRecord trace;
      if (!in.get(trace)) return false;
      message = trace;
      return true;
    }
    case Kind::kSample: {
      SampleMessage sample;
      std::int32_t chain = 0;
      std::vector<float> theta;
      if (!in.get(chain) || !in.get(sample.step) || !in.get(sample.index) ||
          !in.get_vector(theta) || !in.get_vector(sample.prior_precision)) {
        return false;
      }
      sample.chain = chain;
      sample.theta = Eigen::Map<const Eigen::VectorXf>(theta.data(),
                                                       static_cast<Eigen::Index>(theta.size()));
      message = std::move(sample);
      return true;
    }
    case Kind::kState: {
      ChainState state;
      if (!get_chain_state(in, state)) return false;
      message = std::move(state);
      return true;
    }
  }
  return false;
}

void put_ending(Packer& out, const ChainEnding& e) {
  out.put(static_cast<std::int32_t>(e.chain));
  out.put(static_cast<std::int32_t>(e.end));
  put_status(out, e.status);
  out.put(e.step);
  out.put_string(e.reason);
}

bool get_ending(Unpacker& in, ChainEnding& e) {
  std::int32_t chain = 0, end = 0;
  const bool ok = in.get(chain) && in.get(end) && get_status(in, e.status) && in.get(e.step) &&
                  in.get_string(e.reason);
  e.chain = chain;
  e.end = static_cast<ChainEnd>(end);
  return ok;
}

void put_settings(Packer& out, const Settings& settings) {
  out.put(static_cast<std::uint64_t>(settings.size()));
  for (const auto& [name, value] : settings) {
    out.put_string(name);
    out.put(static_cast<std::uint8_t>(value.index()));
    if (const auto* i = std::get_if<std::int64_t>(&value)) {
      out.put(*i);
    } else if (const auto* d = std::get_if<double>(&value)) {
      out.put(*d);
    } else {
      out.put_string(std::get<std::string>(value));
    }
  }
}

bool get_settings(Unpacker& in, Settings& settings) {
  std::uint64_t n = 0;
  if (!in.get(n)) return false;
  settings.clear();
  for (std::uint64_t i = 0; i < n; ++i) {
    std::string name;
    std::uint8_t type = 0;
    if (!in.get_string(name) || !in.get(type)) return false;
    if (type == 0) {
      std::int64_t v = 0;
      if (!in.get(v)) return false;
      settings.emplace_back(std::move(name), v);
    } else if (type == 1) {
      double v = 0;
      if (!in.get(v)) return false;
      settings.emplace_back(std::move(name), v);
    } else {
      std::string v;
      if (!in.get_string(v)) return false;
      settings.emplace_back(std::move(name), std::move(v));
    }
  }
  return true;
}

}  // namespace credence::wire
