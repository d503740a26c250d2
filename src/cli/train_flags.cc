// resolve_train_flags: train's typed flags to a TrainRequest.
#include "cli/train_flags.h"

#include <fmt/format.h>

#include <cmath>
#include <cstdlib>
#include <sstream>

#include "credence/method_flags.h"

namespace credence::cli {
namespace {

Result<std::vector<Index>> parse_widths(const std::string& text) {
  std::vector<Index> widths;
  if (text.empty() || text == "none" || text == "0") return widths;
  std::stringstream stream(text);
  for (std::string piece; std::getline(stream, piece, ',');) {
    char* end = nullptr;
    const long long width = std::strtoll(piece.c_str(), &end, 10);
    if (piece.empty() || *end != '\0' || width < 1) {
      return Status::invalid_input(fmt::format(
          "--hidden '{}': '{}' is not a positive layer width; write widths like 64,64 "
          "(or 'none' for no hidden layer)", text, piece));
    }
    widths.push_back(static_cast<Index>(width));
  }
  return widths;
}

}  // namespace

Result<bool> parse_linear_path(const std::string& text) {
  if (text == "on" || text == "off") return text == "on";
  return Status::invalid_input(fmt::format(
      "--linear-path '{}' is not on or off; give on (a linear map from the inputs to the "
      "outputs beside the hidden layers) or off (the default)",
      text));
}

Status resolve_train_flags(TrainFlags& flags) {
  TrainRequest& r = flags.request;
  // Everything comes from the run file; a flag that would change it is refused.
  if (!r.resume_path.empty()) return check_resume_flags(flags.given);
  if (r.data_path.empty()) return Status::invalid_input("give the data file: credence train DATA.csv ...");
  if (r.out_path.empty()) return Status::invalid_input("give --out RUN.h5 (where the run is written)");
  Result<DataOptions> data = resolve_data_options(flags.data);
  if (!data.ok()) return data.status();
  r.data = *data;
  if (r.data.schema.target.empty()) return Status::invalid_input("give --target COLUMN (the class column)");
  Result<Method> method = parse_method(flags.method);
  if (!method.ok()) return method.status().with_context("--method");
  r.settings.sampler.method = *method;
  Result<Tempering> tempering = parse_tempering(flags.tempering);
  if (!tempering.ok()) return tempering.status().with_context("--tempering");
  r.settings.tempering = *tempering;
  if (flags.schedule == "constant") {
    r.settings.sampler.schedule.kind = ScheduleKind::kConstant;
  } else if (flags.schedule == "polynomial") {
    r.settings.sampler.schedule.kind = ScheduleKind::kPolynomial;
  } else if (flags.schedule == "cyclical") {
    r.settings.sampler.schedule.kind = ScheduleKind::kCyclical;
  } else {
    return Status::invalid_input(fmt::format(
        "--schedule '{}' is not one of constant, polynomial, cyclical", flags.schedule));
  }
  apply_method_defaults(r.settings.sampler, flags.given);
  r.settings.sampler.relativistic.adapt_mass = !flags.fixed_mass;
  CREDENCE_RETURN_IF_ERROR(check_method_flags(*method, r.settings.sampler.schedule.kind,
                                              !r.net_path.empty(), flags.given));
  if (!r.net_path.empty() && !flags.hidden.empty()) {
    return Status::invalid_input("give either --net FILE or --hidden LIST, not both");
  }
  Result<std::vector<Index>> widths = parse_widths(flags.hidden.empty() ? "32,32" : flags.hidden);
  if (!widths.ok()) return widths.status();
  r.hidden = *widths;
  Result<bool> linear_path = parse_linear_path(flags.linear_path);
  if (!linear_path.ok()) return linear_path.status();
  r.linear_path = *linear_path;
  if (r.linear_path && r.hidden.empty() && r.net_path.empty()) {
    return Status::invalid_input(
        "--linear-path on needs hidden layers: with --hidden none the "
        "output layer is already the linear model; drop one of the two");
  }
  r.prior_scale_auto = flags.prior_scale == "auto";
  if (!r.prior_scale_auto) {
    char* end = nullptr;
    r.prior_scale = std::strtod(flags.prior_scale.c_str(), &end);
    if (flags.prior_scale.empty() || *end != '\0' || !(std::isfinite(r.prior_scale) && r.prior_scale > 0)) {
      return Status::invalid_input(fmt::format(
          "--prior-scale {} is not auto or a positive number; give auto (learn the scale) or "
          "a positive scale such as 1", flags.prior_scale));
    }
  }
  r.budget_given = budget_given_of(flags.given);
  // The split and the chains have seeds of their own: runs with one --seed and different
  // --chain-seed values share their split and can be merged.
  r.settings.chains.seed =
      flags.given.count("--chain-seed") > 0 ? flags.chain_seed : r.data.split.seed;
  r.settings.summary_seed = r.data.split.seed;
  return validate_train_settings(r.settings);
}

}  // namespace credence::cli
