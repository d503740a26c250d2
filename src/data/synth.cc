// Invented demo scenarios: generative models, true class probabilities, CSV output.
#include "credence/synth.h"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <numbers>
#include <random>
#include <span>

#include "util/atomic_file.h"

namespace credence {
namespace {

// Draws built only from std::mt19937_64's bits, whose sequence the C++ standard fixes;
// the standard distributions are implementation-defined and would make tables differ
// between standard libraries.
class Draw {
 public:
  explicit Draw(std::uint64_t seed) : bits_(seed) {}

  double uniform() { return static_cast<double>(bits_() >> 11) * 0x1.0p-53; }  // [0, 1)
  double uniform(double lo, double hi) { return lo + (hi - lo) * uniform(); }
  bool bernoulli(double p) { return uniform() < p; }

  // Box-Muller, both values used.
  double normal() {
    if (has_spare_) {
      has_spare_ = false;
      return spare_;
    }
    double u1 = 1.0 - uniform();  // (0, 1], so log is finite
    double u2 = uniform();
    double radius = std::sqrt(-2.0 * std::log(u1));
    spare_ = radius * std::sin(2.0 * std::numbers::pi * u2);
    has_spare_ = true;
    return radius * std::cos(2.0 * std::numbers::pi * u2);
  }
  double normal(double mean, double sd) { return mean + sd * normal(); }
  double lognormal(double median, double sigma) { return median * std::exp(sigma * normal()); }

  // Counting by multiplication of uniforms: fine for the small means used here.
  int poisson(double mean) {
    double limit = std::exp(-mean), product = uniform();
    int count = 0;
    while (product > limit) {
      product *= uniform();
      ++count;
    }
    return count;
  }

  std::size_t pick(std::span<const double> weights) {
    double total = 0;
    for (double w : weights) total += w;
    double u = uniform() * total;
    for (std::size_t i = 0; i + 1 < weights.size(); ++i) {
      if (u < weights[i]) return i;
      u -= weights[i];
    }
    return weights.size() - 1;
  }

 private:
  std::mt19937_64 bits_;
  double spare_ = 0;
  bool has_spare_ = false;
};

double sigmoid(double z) { return 1.0 / (1.0 + std::exp(-z)); }
double softplus(double z) { return z > 30 ? z : std::log1p(std::exp(z)); }
double clamp(double x, double lo, double hi) { return std::min(std::max(x, lo), hi); }

// One drawn row: its CSV cells (already formatted) and its true class probabilities.
struct Row {
  std::string cells;
  std::vector<double> truth;
};

// --- cold-store: will a cold-storage compressor fault within 14 days? -------------
//
// Warehouses at four kinds of site run compressors on four refrigerants. Wear grows
// with age and time since service; salt air at harbour sites, an old unit on R404A,
// high vibration and low oil raise the risk, and a hot site only matters when the
// unit runs long hours. The oil-level sensor is offline on about 3% of readings.
constexpr std::array<const char*, 4> kSites = {"harbour", "airport", "inland", "highland"};
constexpr std::array<double, 4> kSiteWeights = {0.30, 0.20, 0.35, 0.15};
constexpr std::array<double, 4> kSiteAmbient = {17, 21, 24, 11};
constexpr std::array<const char*, 4> kRefrigerants = {"R404A", "R448A", "R290", "CO2"};
constexpr std::array<double, 4> kRefrigerantWeights = {0.30, 0.30, 0.25, 0.15};
constexpr std::array<double, 4> kSuctionBar = {2.8, 2.6, 2.2, 26.0};

Row draw_cold_store(Draw& draw, std::int64_t index) {
  std::size_t site = draw.pick(kSiteWeights);
  std::size_t refrigerant = draw.pick(kRefrigerantWeights);
  double age = clamp(draw.lognormal(5.0, 0.6), 0.3, 25);
  double ambient = kSiteAmbient[site] + draw.normal(0, 4);
  double runtime = clamp(70 + 2.5 * (ambient - 15) + draw.normal(0, 18), 10, 168);
  int doors = draw.poisson(draw.lognormal(40, 0.5));
  bool r404a = refrigerant == 0;
  double discharge = 72 + 0.8 * (ambient - 18) + (r404a ? 1.3 : 1.0) * 0.9 * age +
                     (refrigerant == 3 ? 15 : 0) + draw.normal(0, 4);
  double suction = kSuctionBar[refrigerant] * (1 + draw.normal(0, 0.08));
  double vibration = draw.lognormal(2.0 + 0.15 * age, 0.35);
  double service_days = std::floor(draw.uniform(0, 400));
  double oil = clamp(85 - 0.04 * service_days - 1.2 * age * draw.uniform() + draw.normal(0, 6),
                     5, 100);
  int defrosts = draw.poisson(14 + 0.2 * doors / 7.0);
  bool oil_offline = draw.bernoulli(0.03);

  double z = -4.1 + 0.16 * (age - 5) + 1.1 * softplus((vibration - 3.5) / 0.8) +
             0.045 * (discharge - 85) + (r404a && age > 8 ? 0.9 : 0.0) +
             0.0035 * service_days + (site == 0 ? 0.55 : 0.0) +
             0.04 * std::max(0.0, 70 - oil) + (ambient > 25 ? 0.02 * (runtime - 80) : 0.0);
  double p_yes = sigmoid(z);
  bool fault = draw.bernoulli(p_yes);

  Row row;
  row.cells = fmt::format(
      "CS-{:06d},{},{},{:.1f},{:.1f},{:.0f},{},{:.1f},{:.2f},{:.2f},{:.0f},{},{},{}", index,
      kSites[site], kRefrigerants[refrigerant], age, ambient, runtime, doors, discharge,
      suction, vibration, service_days, oil_offline ? "" : fmt::format("{:.1f}", oil),
      defrosts, fault ? "yes" : "no");
  row.truth = {1 - p_yes, p_yes};  // classes sorted: no, yes
  return row;
}

constexpr const char* kColdStoreHeader =
    "unit_id,site,refrigerant,compressor_age_y,ambient_temp_c,runtime_h_7d,"
    "door_openings_day,discharge_temp_c,suction_pressure_bar,vibration_mm_s,"
    "days_since_service,oil_level_pct,defrost_cycles_7d,fault_14d";

// --- pump-wear: condition of an irrigation pump (healthy, worn, failing) ------------
//
// Latent wear grows with hours since overhaul, faster in silty water. Worn pumps show
// it in vibration and current draw; failing ones also in bearing temperature, and more
// so at high duty cycles.
constexpr std::array<const char*, 3> kSources = {"river", "well", "reservoir"};
constexpr std::array<double, 3> kSourceWeights = {0.40, 0.35, 0.25};
constexpr std::array<double, 3> kSourceSediment = {120, 25, 60};

Row draw_pump_wear(Draw& draw, std::int64_t index) {
  std::size_t source = draw.pick(kSourceWeights);
  double hours = std::floor(draw.uniform(0, 12000));
  double sediment = draw.lognormal(kSourceSediment[source], 0.5);
  double wear = hours / 1000.0 * (1 + sediment / 150);
  double head = clamp(draw.normal(35, 8), 10, 70);
  double duty = draw.uniform(20, 95);
  double flow = 900 - 8 * (head - 35) - 12 * wear + draw.normal(0, 40);
  double current = 22 + 0.12 * (head - 35) + 0.35 * wear + draw.normal(0, 1.5);
  double bearing = 45 + 1.6 * wear + 0.08 * (duty - 60) + draw.normal(0, 4);
  double vibration = draw.lognormal(1.5 + 0.25 * wear, 0.3);

  double z_worn = -4.8 + 0.45 * wear + 0.3 * (vibration - 3);
  double z_failing = -4.5 + 0.1 * wear + 2.0 * softplus((bearing - 62) / 4) + 0.03 * (duty - 60);
  double denominator = 1 + std::exp(z_worn) + std::exp(z_failing);
  double p_worn = std::exp(z_worn) / denominator;
  double p_failing = std::exp(z_failing) / denominator;
  double p_healthy = 1 / denominator;
  std::array<double, 3> probabilities = {p_failing, p_healthy, p_worn};  // sorted names
  constexpr std::array<const char*, 3> kConditions = {"failing", "healthy", "worn"};
  std::size_t condition = draw.pick(probabilities);

  Row row;
  row.cells = fmt::format("PW-{:06d},{},{:.0f},{:.0f},{:.1f},{:.0f},{:.0f},{:.1f},{:.1f},{:.2f},{}",
                          index, kSources[source], hours, sediment, head, duty, flow, current,
                          bearing, vibration, kConditions[condition]);
  row.truth = {p_failing, p_healthy, p_worn};
  return row;
}

constexpr const char* kPumpWearHeader =
    "pump_id,water_source,hours_since_overhaul,sediment_ppm,head_m,duty_cycle_pct,"
    "flow_lpm,current_a,bearing_temp_c,vibration_mm_s,condition";

struct ScenarioModel {
  SynthScenario info;
  const char* header;
  std::vector<std::string> classes;  // sorted, as the data module sorts class names
  Row (*draw)(Draw&, std::int64_t);
};

const std::vector<ScenarioModel>& scenario_models() {
  static const std::vector<ScenarioModel> models = {
      {{"cold-store", "fault_14d", "unit_id",
        "binary: will a cold-storage compressor fault within 14 days (sensor readings, site, "
        "refrigerant; some oil-level readings missing)"},
       kColdStoreHeader, {"no", "yes"}, draw_cold_store},
      {{"pump-wear", "condition", "pump_id",
        "three classes: condition of an irrigation pump (healthy, worn, failing) from flow, "
        "current, temperature and vibration"},
       kPumpWearHeader, {"failing", "healthy", "worn"}, draw_pump_wear},
  };
  return models;
}

}  // namespace

const std::vector<SynthScenario>& synth_scenarios() {
  static const std::vector<SynthScenario> scenarios = [] {
    std::vector<SynthScenario> out;
    for (const ScenarioModel& model : scenario_models()) out.push_back(model.info);
    return out;
  }();
  return scenarios;
}

Status write_synth_table(const SynthOptions& options, const std::string& csv_path,
                         const std::string& truth_path) {
  const ScenarioModel* model = nullptr;
  for (const ScenarioModel& candidate : scenario_models()) {
    if (candidate.info.name == options.scenario) model = &candidate;
  }
  if (model == nullptr) {
    std::string names;
    for (const SynthScenario& s : synth_scenarios()) names += (names.empty() ? "" : ", ") + s.name;
    return Status::invalid_input(
        fmt::format("unknown scenario '{}'; choose one of: {}", options.scenario, names));
  }
  if (options.rows < 1 || options.rows > 10'000'000) {
    return Status::invalid_input(
        fmt::format("--rows {} is out of range; give 1 to 10000000", options.rows));
  }

  Draw draw(options.seed);
  std::string csv = std::string(model->header) + "\n";
  std::string truth = model->info.id_column;
  for (const std::string& name : model->classes) truth += ",p_" + name;
  truth += "\n";
  for (std::int64_t i = 0; i < options.rows; ++i) {
    Row row = model->draw(draw, i + 1);
    csv += row.cells;
    csv += '\n';
    truth += row.cells.substr(0, row.cells.find(','));
    for (double p : row.truth) truth += fmt::format(",{:.6f}", p);
    truth += '\n';
  }
  CREDENCE_RETURN_IF_ERROR(write_file_atomically(csv_path, csv));
  Status truth_written = write_file_atomically(truth_path, truth);
  if (!truth_written.ok()) std::remove(csv_path.c_str());  // both files or neither
  return truth_written;
}

}  // namespace credence
