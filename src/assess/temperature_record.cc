// fitted_temperature_record: the stored form of a temperature fitted by assess.
#include <fmt/chrono.h>
#include <fmt/format.h>

#include <ctime>

#include "credence/assess.h"

namespace credence {

StoredTemperature fitted_temperature_record(const AssessJobResult& result, std::int64_t samples) {
  StoredTemperature stored;
  stored.temperature = result.fit->temperature;
  stored.samples = samples;
  stored.fitted_on = fmt::format("validation split, {} rows", result.val_rows);
  stored.nll_before = result.fit->nll_before;
  stored.nll_after = result.fit->nll_after;
  stored.fitted_utc = fmt::format("{:%Y-%m-%dT%H:%M:%SZ}", fmt::gmtime(std::time(nullptr)));
  return stored;
}

}  // namespace credence
