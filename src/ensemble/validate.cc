// The one validation pass over a run file's header and committed counts, run when a file
// is opened and before anything uses them: a run file is untrusted input (a colleague's
// copy, a damaged disk, a hand edit), so every structural field is checked against the
// stored network and against the other fields. Sizes are compared, never added or
// multiplied unchecked, so no damaged value can overflow.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <set>
#include <string>
#include <optional>
#include <string_view>
#include <variant>

#include "credence/net.h"
#include "ensemble/layout.h"
#include "ensemble/run_file.h"

namespace credence::run_file {
namespace {

using namespace credence::layout;

// "preprocessing/features/offset[2]"
std::string field(const char* group, const char* name, std::size_t index) {
  return fmt::format("{}/{}[{}]", group, name, index);
}

Status damaged(const std::string& what) { return Status::corrupt(what); }

const std::string kFeatures_ = std::string(kPreprocessing) + "/" + kFeatures;

Status check_features(const Preprocessing& p) {
  const char* group = kFeatures_.c_str();
  if (p.features.empty()) return damaged(kFeatures_ + " lists no feature");
  if (p.input_width < 1) {
    return damaged(fmt::format("{}/{} is {}; it must be at least 1", kPreprocessing, kInputWidth,
                               p.input_width));
  }
  // The encodings tile [0, input_width) in order: each starts where the previous ends.
  std::int64_t next = 0;
  for (std::size_t i = 0; i < p.features.size(); ++i) {
    const FeatureEncoding& f = p.features[i];
    if (f.offset != next) {
      return damaged(fmt::format(
          "{} is {} but the encodings before it end at {} (feature '{}'); the encodings must "
          "tile the network's {} inputs with no gap or overlap",
          field(group, kOffset, i), f.offset, next, f.name, p.input_width));
    }
    if (f.type == ColumnType::kNumeric) {
      if (f.width != 1) {
        return damaged(fmt::format("{} is {} for numeric feature '{}'; a numeric feature has width 1",
                                   field(group, kWidth, i), f.width, f.name));
      }
      if (!f.categories.empty()) {
        return damaged(fmt::format("{} is {} for numeric feature '{}'; it must be 0",
                                   field(group, kCategoryCount, i), f.categories.size(), f.name));
      }
      if (!std::isfinite(f.mean)) {
        return damaged(fmt::format("{} of feature '{}' is {}; it must be a finite number",
                                   field(group, kMean, i), f.name, f.mean));
      }
      if (!std::isfinite(f.scale) || !(f.scale > 0)) {
        return damaged(fmt::format("{} of feature '{}' is {}; it must be a finite number > 0",
                                   field(group, kScale, i), f.name, f.scale));
      }
      if (p.impute == ImputeMethod::kMedian && !std::isfinite(f.impute_value)) {
        return damaged(fmt::format(
            "{} of feature '{}' is {}; with median imputation it must be a finite number",
            field(group, kImputeValue, i), f.name, f.impute_value));
      }
    } else {
      const auto levels = static_cast<std::int64_t>(f.categories.size());
      if (levels < 1) {
        return damaged(fmt::format("{} is 0 for categorical feature '{}'; it needs at least one "
                                   "level",
                                   field(group, kCategoryCount, i), f.name));
      }
      if (f.width != levels) {
        return damaged(fmt::format(
            "{} is {} for categorical feature '{}' but it has {} levels; the width must "
            "equal the level count",
            field(group, kWidth, i), f.width, f.name, levels));
      }
      for (std::size_t k = 1; k < f.categories.size(); ++k) {
        if (!(f.categories[k - 1] < f.categories[k])) {
          return damaged(fmt::format(
              "the levels of categorical feature '{}' ({} from {}) are not sorted without "
              "repeats at level {}",
              f.name, kCategories, field(group, kCategoryStart, i), k));
        }
      }
    }
    // Widths are 1 or a level count, so both are below the count of stored strings.
    next += f.width;
  }
  if (next != p.input_width) {
    return damaged(fmt::format("{}/{} is {} but the feature encodings cover {} inputs",
                               kPreprocessing, kInputWidth, p.input_width, next));
  }
  return Status::ok_status();
}

Status check_classes(const Preprocessing& p) {
  if (p.class_names.size() < 2) {
    return damaged(fmt::format("{}/{} holds {} name(s); a classifier has at least 2",
                               kPreprocessing, kClassNames, p.class_names.size()));
  }
  std::set<std::string> seen;
  for (std::size_t k = 0; k < p.class_names.size(); ++k) {
    if (!seen.insert(p.class_names[k]).second) {
      return damaged(fmt::format("{} repeats the class name '{}'",
                                 field(kPreprocessing, kClassNames, k), p.class_names[k]));
    }
  }
  return Status::ok_status();
}

// Row indices of one split: sorted, inside the data file.
Status check_rows(const std::vector<std::int64_t>& rows, std::int64_t data_rows,
                  const char* name) {
  for (std::size_t i = 0; i < rows.size(); ++i) {
    if (rows[i] < 0 || rows[i] >= data_rows) {
      return damaged(fmt::format("{} is {}, outside the data file's {} rows",
                                 field(kData, name, i), rows[i], data_rows));
    }
  }
  return Status::ok_status();
}

Status check_model(const RunHeader& h) {
  Result<NetSpec> spec = parse_net_text(h.net_text, std::string(kModel) + "/" + kNetText);
  if (!spec.ok()) return damaged(spec.status().message());
  Result<ParamLayout> layout =
      resolve_layout(*spec, static_cast<Index>(h.preprocessing.input_width),
                     static_cast<Index>(h.preprocessing.class_names.size()));
  if (!layout.ok()) {
    return damaged(fmt::format("{}/{} does not fit the stored preprocessing: {}", kModel,
                               kNetText, layout.status().message()));
  }
  // The output width is the class count by construction, so the parameter count is
  // what ties the net, the classes and the inputs to the stored samples.
  if (layout->num_params != h.parameters) {
    return damaged(fmt::format(
        "{}/{} is {} but the stored network ({}/{}) for {} inputs ({}/{}) and {} classes "
        "({}/{}) has {} parameters",
        kModel, kParameters, h.parameters, kModel, kNetText, h.preprocessing.input_width,
        kPreprocessing, kInputWidth, h.preprocessing.class_names.size(), kPreprocessing,
        kClassNames, layout->num_params));
  }
  if (static_cast<std::size_t>(h.layers) != layout->layers.size()) {
    return damaged(fmt::format("{}/{} is {} but the stored network has {} layers", kSampling,
                               kLayerCount, h.layers, layout->layers.size()));
  }
  return Status::ok_status();
}

Status check_committed(const Committed& c) {
  const std::string slot =
      fmt::format("{}/{}", kCheckpoint, slot_group(std::max(c.active_slot, 0)));
  if (c.samples < 0) {
    return damaged(fmt::format("{}/{} is {}", slot, kCommittedSamples, c.samples));
  }
  for (std::size_t i = 0; i < c.states.size(); ++i) {
    if (!c.has_state[i]) continue;
    const ChainState& s = c.states[i];
    if (s.next_step < 0) {
      return damaged(fmt::format("{}/{}[{}] is {}", slot, kNextStep, i, s.next_step));
    }
    if (s.kept < 0) return damaged(fmt::format("{}/{}[{}] is {}", slot, kKept, i, s.kept));
    if (!std::isfinite(s.seconds) || s.seconds < 0) {
      return damaged(fmt::format("{}/{}[{}] is {}", slot, kSeconds, i, s.seconds));
    }
    if (s.gradient_evals < 0) {
      return damaged(fmt::format("{}/{}[{}] is {}", slot, kGradientEvals, i, s.gradient_evals));
    }
    // A chain that may be resumed continues from this theta; a diverged or failed one
    // is never continued, and full-batch rules may leave its state partly updated.
    if (s.status == ChainStatus::kDiverged || s.status == ChainStatus::kFailed) continue;
    for (std::size_t j = 0; j < s.theta.size(); ++j) {
      if (!std::isfinite(s.theta[j])) {
        return damaged(fmt::format("{}/{}[chain {}, parameter {}] is {}; a resumable chain's "
                                   "position must be finite",
                                   slot, kTheta, i, j, s.theta[j]));
      }
    }
  }
  return Status::ok_status();
}

// The state arrays a method's resume reads, with their widths (0 = the parameter count P).
// The ensemble module knows no sampler, so the table names them; restore_state would refuse
// a wrong width too, but only when a resume reaches it, after the file had been trusted.
struct StateArray {
  std::string_view method;
  bool words;  // words, else floats
  std::string_view name;
  std::int64_t width;
};
constexpr StateArray kStateArrays[] = {
    {"santa", false, "u", 0},           {"santa", false, "alpha", 0},
    {"santa", false, "v", 0},           {"santa", false, "preconditioner", 0},
    {"santa", true, "santa_started", 1}, {"santa", true, "santa_refining", 1},
    {"santa", true, "alpha_clipped", 1},
};

Status check_state_sizes(const RunHeader& h) {
  std::string method;
  for (const auto& [name, value] : h.settings) {
    if (name == "method" && std::holds_alternative<std::string>(value)) {
      method = std::get<std::string>(value);
    }
  }
  // santa-opt is santa's optimizer and keeps the same state.
  if (method == "santa-opt") method = "santa";
  for (const StateArray& a : kStateArrays) {
    if (a.method != method) continue;
    const std::int64_t want = a.width == 0 ? h.parameters : a.width;
    const std::string name(a.name);
    const char* kind = a.words ? kWords : kFloats;
    std::optional<std::size_t> have;
    auto find = [&](const auto& arrays) {
      if (auto it = arrays.find(name); it != arrays.end()) have = it->second.size();
    };
    if (a.words) {
      find(h.state_template.words);
    } else {
      find(h.state_template.floats);
    }
    const std::string where =
        fmt::format("{}/{}/{}/{}/{}", kCheckpoint, slot_group(0), kState, kind, name);
    if (!have) {
      return damaged(fmt::format("{} is missing; a {} run keeps it to resume", where, method));
    }
    if (static_cast<std::int64_t>(*have) != want) {
      return damaged(fmt::format("{} holds {} values per chain; a {} run of {} parameters keeps {}",
                                 where, *have, method, h.parameters, want));
    }
  }
  return Status::ok_status();
}

}  // namespace

Status validate_header_fields(const RunHeader& h) {
  const Preprocessing& p = h.preprocessing;
  CREDENCE_RETURN_IF_ERROR(check_features(p));
  CREDENCE_RETURN_IF_ERROR(check_classes(p));
  if (h.data_rows < 0) {
    return damaged(fmt::format("{}/{} is {}", kData, kDataRows, h.data_rows));
  }
  CREDENCE_RETURN_IF_ERROR(check_rows(h.train_rows, h.data_rows, kTrainRows));
  CREDENCE_RETURN_IF_ERROR(check_rows(h.val_rows, h.data_rows, kValRows));
  CREDENCE_RETURN_IF_ERROR(check_rows(h.test_rows, h.data_rows, kTestRows));
  for (std::size_t i = 0; i < h.probe_rows.size(); ++i) {
    if (h.probe_rows[i] < 0 || h.probe_rows[i] >= h.data_rows) {
      return damaged(fmt::format("{} is {}, outside the data file's {} rows",
                                 field(kSampling, kProbeRows, i), h.probe_rows[i], h.data_rows));
    }
  }
  if (!h.probe_labels.empty()) {
    if (h.probe_labels.size() != h.probe_rows.size()) {
      return damaged(fmt::format("{}/{} has {} entries for {} probe rows", kSampling,
                                 kProbeLabels, h.probe_labels.size(), h.probe_rows.size()));
    }
    const auto classes = static_cast<std::int64_t>(p.class_names.size());
    for (std::size_t i = 0; i < h.probe_labels.size(); ++i) {
      if (h.probe_labels[i] < 0 || h.probe_labels[i] >= classes) {
        return damaged(fmt::format("{} is {}, not a class index below {}",
                                   field(kSampling, kProbeLabels, i), h.probe_labels[i], classes));
      }
    }
  }
  if (h.samples_per_chain < 0) {
    return damaged(fmt::format("{}/{} is {}", kSampling, kSamplesPerChain, h.samples_per_chain));
  }
  CREDENCE_RETURN_IF_ERROR(check_state_sizes(h));
  return check_model(h);
}

Status validate_committed(const Committed& committed) { return check_committed(committed); }

}  // namespace credence::run_file
