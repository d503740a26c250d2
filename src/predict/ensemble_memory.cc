// check_ensemble_memory: estimate an ensemble's evaluation and refuse what will not fit.
#include "predict/ensemble_memory.h"

#include <fmt/format.h>
#include <omp.h>

#include <algorithm>

#include "credence/net.h"
#include "credence/predict.h"
#include "util/memory_guard.h"

namespace credence {

Status check_ensemble_memory(const RunReader& run, const std::string& run_path,
                             std::int64_t samples, const std::string& table_path,
                             const std::string& max_memory) {
  Result<MemoryLimit> limit = memory_limit_from_flag(max_memory);
  if (!limit.ok()) return limit.status();
  const RunHeader& header = run.header();
  const std::int64_t committed = run.summary().samples;
  const std::int64_t used = samples > 0 ? std::min(samples, committed) : committed;
  EnsembleMemoryInputs in;
  in.parameters = static_cast<std::uint64_t>(std::max<std::int64_t>(header.parameters, 0));
  in.samples = static_cast<std::uint64_t>(std::max<std::int64_t>(used, 0));
  in.block_rows = static_cast<std::uint64_t>(PredictorOptions{}.block_rows);
  std::int64_t widest = std::max<std::int64_t>(
      {header.preprocessing.input_width,
       static_cast<std::int64_t>(header.preprocessing.class_names.size()), 1});
  std::uint64_t layers = 1;
  if (Result<NetSpec> spec = parse_net_text(header.net_text, run_path); spec.ok()) {
    for (const HiddenLayerSpec& layer : spec->hidden)
      widest = std::max<std::int64_t>(widest, layer.width);
    layers += spec->hidden.size();
  }
  in.widest_layer = static_cast<std::uint64_t>(widest);
  in.layers = layers;
  in.threads = static_cast<std::uint64_t>(std::max(1, omp_get_max_threads()));
  in.table_file_bytes = table_path.empty() ? 0 : file_bytes_or_zero(table_path);
  const std::string what =
      fmt::format("{}: evaluating {} parameters x {} kept samples{}", run_path, header.parameters,
                  used, table_path.empty() ? std::string() : " on the rows of " + table_path);
  return check_memory(what, estimate_ensemble_bytes(in), *limit);
}

}  // namespace credence
