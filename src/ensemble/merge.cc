// merge_runs: joins runs of the same net and preprocessing, renumbering chains.
#include <fmt/format.h>
#include <unistd.h>

#include <algorithm>
#include <filesystem>
#include <sstream>
#include <system_error>
#include <variant>

#include "credence/ensemble.h"
#include "ensemble/copy_committed.h"
#include "util/atomic_file.h"
#include "util/log.h"

namespace credence {
namespace {

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

// "line 3: 'hidden 64 relu' against 'hidden 32 relu'".
std::string net_difference(const std::string& a, const std::string& b) {
  std::vector<std::string> la = lines_of(a), lb = lines_of(b);
  for (std::size_t i = 0; i < std::max(la.size(), lb.size()); ++i) {
    const std::string x = i < la.size() ? la[i] : "(end of text)";
    const std::string y = i < lb.size() ? lb[i] : "(end of text)";
    if (x != y) return "line " + std::to_string(i + 1) + ": '" + y + "' against '" + x + "'";
  }
  return "whitespace";
}

std::string preprocessing_difference(const Preprocessing& a, const Preprocessing& b) {
  if (a.target != b.target) return "target '" + b.target + "' against '" + a.target + "'";
  if (a.class_names != b.class_names) return "class names";
  if (a.columns != b.columns) return "column list";
  if (a.features.size() != b.features.size()) return "number of features";
  for (std::size_t i = 0; i < a.features.size(); ++i) {
    if (!(a.features[i] == b.features[i])) {
      return "encoding of feature '" + b.features[i].name + "' (mean, scale or categories)";
    }
  }
  if (a.impute != b.impute) return "missing-value handling";
  if (a.unseen != b.unseen) return "unseen-category policy";
  return "input width or class order";
}

// A setting as text ("sgld", "0.5"), or "(none)" when the run does not record it.
std::string setting_text(const Settings& settings, const std::string& name) {
  for (const auto& [key, value] : settings) {
    if (key != name) continue;
    if (const auto* text = std::get_if<std::string>(&value)) return *text;
    if (const auto* number = std::get_if<double>(&value)) return fmt::format("{}", *number);
    return std::to_string(std::get<std::int64_t>(value));
  }
  return "(none)";
}

// Runs are merged into one ensemble of one target: the method and what it samples (the
// temperature and what it tempers) must agree, or the merged run would report the first
// run's method for every sample.
Status check_same_target(const RunHeader& a, const std::string& a_path, const RunHeader& b,
                         const std::string& b_path) {
  for (const char* name : {"method", "temperature", "tempering"}) {
    const std::string x = setting_text(a.settings, name), y = setting_text(b.settings, name);
    if (x == y) continue;
    return Status::invalid_input(fmt::format(
        "merging run files: {} has {} {} but {} has {} {}; only runs of the same method and "
        "target can be merged; merge each method's runs separately",
        b_path, name, y, a_path, name, x));
  }
  return Status::ok_status();
}

// Every name of `from` not yet in `into` is added (sizes of names already present win).
template <typename Map>
void add_names(Map& into, const Map& from) {
  for (const auto& [name, values] : from) into.try_emplace(name, values.size());
}

Status merge_into(const std::vector<std::unique_ptr<RunReader>>& runs, const RunHeader& header,
                  const std::string& temp) {
  Result<std::unique_ptr<RunWriter>> writer = RunWriter::create(temp, header, true);
  if (!writer.ok()) return writer.status();
  RunStatus final_status = RunStatus::kComplete;
  int chain_base = 0;
  for (const auto& run : runs) {
    CREDENCE_RETURN_IF_ERROR(run_file::copy_committed(*run, **writer, chain_base));
    if (final_status == RunStatus::kComplete) final_status = run->summary().status;
    chain_base += run->header().chains;
  }
  return (*writer)->finish(final_status);
}

}  // namespace

Status merge_runs(std::span<const std::string> inputs, const std::string& output, bool overwrite) {
  if (inputs.empty()) return Status::invalid_input("merging run files: no input given");
  std::error_code error;
  if (std::filesystem::exists(output, error) && !overwrite) {
    return Status::invalid_input("merging run files: " + output +
                                 " already exists; choose another --out or pass --force to "
                                 "replace it");
  }
  std::vector<std::unique_ptr<RunReader>> runs;
  for (const std::string& input : inputs) {
    Result<std::unique_ptr<RunReader>> run = RunReader::open(input);
    if (!run.ok()) return run.status();
    runs.push_back(std::move(*run));
  }
  const RunHeader& first = runs[0]->header();
  RunHeader header = first;
  header.chains = 0;
  for (std::size_t i = 0; i < runs.size(); ++i) {
    const RunHeader& h = runs[i]->header();
    const std::string pair = inputs[i] + " and " + inputs[0];
    if (h.parameters != first.parameters) {
      return Status::invalid_input("merging run files: " + inputs[i] + " has " +
                                   std::to_string(h.parameters) + " parameters but " + inputs[0] +
                                   " has " + std::to_string(first.parameters) +
                                   "; only runs of the same net and data can be merged");
    }
    if (h.net_text != first.net_text) {
      return Status::invalid_input("merging run files: the net text of " + pair + " differs at " +
                                   net_difference(first.net_text, h.net_text) +
                                   "; only runs of the same net can be merged");
    }
    if (!(h.preprocessing == first.preprocessing)) {
      return Status::invalid_input("merging run files: the preprocessing of " + pair +
                                   " differs in its " +
                                   preprocessing_difference(first.preprocessing, h.preprocessing) +
                                   "; only runs trained on the same data split can be merged");
    }
    if (h.probe_rows != first.probe_rows || h.projections != first.projections ||
        h.layers != first.layers) {
      return Status::invalid_input("merging run files: the tracked summaries of " + pair +
                                   " differ (probe rows, projections or layers); train both "
                                   "with the same split and settings");
    }
    CREDENCE_RETURN_IF_ERROR(check_same_target(first, inputs[0], h, inputs[i]));
    if (h.data_sha256 != first.data_sha256) {
      log().warn("merging run files: {} was trained on a data file with another SHA-256 than {}",
                 inputs[i], inputs[0]);
    }
    header.chains += h.chains;
    header.samples_per_chain = std::max(header.samples_per_chain, h.samples_per_chain);
    add_names(header.state_template.floats, h.state_template.floats);
    add_names(header.state_template.doubles, h.state_template.doubles);
    add_names(header.state_template.words, h.state_template.words);
  }
  remove_stale_temporaries(output, "partial");  // left by a merge or train that was killed
  const std::string temp = temporary_path(output, "partial");
  Status status = merge_into(runs, header, temp);
  if (status.ok()) {
    std::filesystem::rename(temp, output, error);
    if (error)
      status = Status::io_error("merging run files: cannot rename " + temp + " to " + output +
                                ": " + error.message());
  }
  if (!status.ok()) std::filesystem::remove(temp, error);
  return status;
}

}  // namespace credence
