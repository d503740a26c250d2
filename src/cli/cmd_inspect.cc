// `credence inspect`: what a run file holds (provenance, settings, chains, status).
#include <fmt/format.h>

#include <cstdio>
#include <variant>

#include "cli/commands.h"
#include "util/json.h"
#include "credence/ensemble.h"
#include "credence/net.h"
#include "report/settings_view.h"
#include "util/atomic_file.h"

namespace credence::cli {
namespace {

struct InspectOptions {
  std::string run_path;
  std::string json_path;
};

std::string setting_text(const SettingValue& value) {
  return std::visit(
      [](const auto& v) -> std::string {
        if constexpr (std::is_same_v<std::decay_t<decltype(v)>, std::string>) {
          std::string printable;
          for (char c : v) printable += (c == '\x1f') ? std::string(",") : std::string(1, c);
          return printable;
        } else {
          return fmt::format("{}", v);
        }
      },
      value);
}

std::string setting_json(const SettingValue& value) {
  if (const auto* text = std::get_if<std::string>(&value)) return json_string(*text);
  if (const auto* number = std::get_if<double>(&value)) return json_number(*number);
  return fmt::format("{}", std::get<std::int64_t>(value));
}

// The prior the run used: fixed scales, or a learned scale and its hyperprior.
std::string prior_text(const RunHeader& header) {
  Result<NetSpec> spec = parse_net_text(header.net_text, "stored net");
  if (!spec.ok()) return "(net text unreadable)";
  const PriorSpec& p = spec->prior;
  const std::string bias = fmt::format("bias sd {:g}", p.bias_scale);
  const std::string weights =
      p.fan_in_scaling ? fmt::format("{:g}/sqrt(fan-in)", p.weight_scale)
                       : fmt::format("{:g}", p.weight_scale);
  std::string text = p.learn_scale
                         ? fmt::format("learned scale (scale=auto): per-block precision with a "
                                       "Gamma(shape {:g}, rate {}) hyperprior, Gibbs update "
                                       "every {:g} pass(es), started at weight sd {}, {}; "
                                       "optimizers: evidence updates from 3x that sd, capped "
                                       "at it (docs/prior.md)",
                                       p.hyper_shape,
                                       p.hyper_rate ? fmt::format("{:g}", *p.hyper_rate)
                                                    : std::string("matched"),
                                       p.gibbs_passes, weights, bias)
                         : fmt::format("fixed: weight sd {}, {}", weights, bias);
  if (!p.overrides.empty()) text += fmt::format(" ({} layer override(s))", p.overrides.size());
  return text;
}

std::string text_report(const std::string& path, const RunHeader& h, const RunSummary& s,
                        const std::optional<StoredTemperature>& temperature) {
  std::string out;
  auto line = [&](std::string_view key, const std::string& value) {
    out += fmt::format("{:<12}{}\n", key, value);
  };
  line("run file", fmt::format("{} ({:.1f} MB)", path, static_cast<double>(s.file_bytes) / 1e6));
  line("status", std::string(run_status_name(s.status)) +
                     (s.recovered ? " (the writer stopped abruptly; resume with --resume)" : ""));
  line("created", fmt::format("{} by credence {}", h.created_utc, h.tool_version));
  line("command", h.command_line);
  line("processes", h.mpi_ranks == 1 ? std::string("1 (no MPI)")
                                      : fmt::format("{} MPI ranks on {} host{}", h.mpi_ranks,
                                                    h.mpi_hosts, h.mpi_hosts == 1 ? "" : "s"));
  line("data", fmt::format("{} ({} rows; sha256 {})", h.data_file, h.data_rows, h.data_sha256));
  line("split", fmt::format("train {}, validation {}, test {}", h.train_rows.size(),
                            h.val_rows.size(), h.test_rows.size()));
  std::string classes;
  for (const std::string& name : h.preprocessing.class_names) {
    classes += (classes.empty() ? "" : ", ") + name;
  }
  line("target", fmt::format("{} (classes {})", h.preprocessing.target, classes));
  line("network", fmt::format("{}; {} parameters", report::network_words(h), h.parameters));
  line("prior", prior_text(h));
  line("samples", fmt::format("{} kept of {} planned ({} chains x {})", s.samples,
                              h.samples_per_chain * h.chains, h.chains, h.samples_per_chain));
  const bool costs = s.seconds_per_chain.size() == s.kept_per_chain.size();
  for (std::size_t c = 0; c < s.kept_per_chain.size(); ++c) {
    const std::string cost =
        costs ? fmt::format("{:>8.1f} s {:>9} gradients  ", s.seconds_per_chain[c],
                            s.gradient_evals_per_chain[c])
              : std::string();
    out += fmt::format("  chain {:<3} {:<10} step {:<8} kept {:<6} {}{}\n", c,
                       chain_status_name(s.chain_status[c]), s.steps_per_chain[c],
                       s.kept_per_chain[c], cost, s.chain_reason[c]);
  }
  if (temperature) {
    line("calibration",
         fmt::format("temperature {:.4g} fitted {} on the {} (NLL {:.4f} -> {:.4f}); predict "
                     "divides every member's logits by it",
                     temperature->temperature, temperature->fitted_utc, temperature->fitted_on,
                     temperature->nll_before, temperature->nll_after));
  }
  out += "settings\n";
  for (const auto& [name, value] : h.settings) {
    out += fmt::format("  {:<36}{}\n", name, setting_text(value));
  }
  return out;
}

std::string json_report(const std::string& path, const RunHeader& h, const RunSummary& s,
                        const std::optional<StoredTemperature>& temperature) {
  const bool costs = s.seconds_per_chain.size() == s.kept_per_chain.size();
  std::string chains;
  for (std::size_t c = 0; c < s.kept_per_chain.size(); ++c) {
    chains += fmt::format("{}{{\"chain\": {}, \"status\": {}, \"steps\": {}, \"kept\": {}, "
                          "\"seconds\": {}, \"gradient_evals\": {}, \"reason\": {}}}",
                          c ? ", " : "", c, json_string(chain_status_name(s.chain_status[c])),
                          s.steps_per_chain[c], s.kept_per_chain[c],
                          costs ? json_number(s.seconds_per_chain[c]) : "null",
                          costs ? fmt::format("{}", s.gradient_evals_per_chain[c]) : "null",
                          json_string(s.chain_reason[c]));
  }
  const std::string temperature_json =
      temperature ? fmt::format("{{\"temperature\": {}, \"fitted_on\": {}, \"fitted_utc\": {}, "
                                "\"nll_before\": {}, \"nll_after\": {}}}",
                                json_number(temperature->temperature),
                                json_string(temperature->fitted_on),
                                json_string(temperature->fitted_utc),
                                json_number(temperature->nll_before),
                                json_number(temperature->nll_after))
                  : "null";
  std::string settings;
  for (const auto& [name, value] : h.settings) {
    settings += fmt::format("{}{}: {}", settings.empty() ? "" : ", ", json_string(name),
                            setting_json(value));
  }
  std::string classes;
  for (const std::string& name : h.preprocessing.class_names) {
    classes += (classes.empty() ? "" : ", ") + json_string(name);
  }
  return fmt::format(
      "{{\"run_file\": {}, \"file_bytes\": {}, \"status\": {}, \"recovered\": {}, "
      "\"tool_version\": {}, \"created_utc\": {}, \"command_line\": {}, \"data_file\": {}, "
      "\"data_sha256\": {}, \"data_rows\": {}, \"split\": {{\"train\": {}, \"validation\": {}, "
      "\"test\": {}}}, \"target\": {}, \"classes\": [{}], \"input_width\": {}, "
      "\"parameters\": {}, \"chains\": {}, \"samples_per_chain\": {}, \"samples\": {}, "
      "\"chain_details\": [{}], \"temperature\": {}, \"settings\": {{{}}}}}\n",
      json_string(path), s.file_bytes, json_string(run_status_name(s.status)),
      s.recovered ? "true" : "false", json_string(h.tool_version), json_string(h.created_utc),
      json_string(h.command_line), json_string(h.data_file), json_string(h.data_sha256),
      h.data_rows, h.train_rows.size(), h.val_rows.size(), h.test_rows.size(),
      json_string(h.preprocessing.target), classes, h.preprocessing.input_width, h.parameters,
      h.chains, h.samples_per_chain, s.samples, chains, temperature_json, settings);
}

Status run_inspect(const InspectOptions& options) {
  // A damaged file that still reads: show what it holds, then refuse it (exit 2) with
  // what is wrong, and write no JSON.
  Result<std::unique_ptr<RunReader>> reader =
      RunReader::open(options.run_path, RunOpen::kReportDamage);
  if (!reader.ok()) return reader.status();
  const RunHeader& header = (*reader)->header();
  const RunSummary& summary = (*reader)->summary();
  if (!(*reader)->damage().ok()) {
    const std::string text = text_report(options.run_path, header, summary, std::nullopt) +
                             "damage      this file fails validation (see the message below)\n";
    std::fwrite(text.data(), 1, text.size(), stdout);
    std::fflush(stdout);
    return (*reader)->damage();
  }
  Result<std::optional<StoredTemperature>> temperature = (*reader)->stored_temperature();
  if (!temperature.ok()) return temperature.status();
  const std::string text = text_report(options.run_path, header, summary, *temperature);
  std::fwrite(text.data(), 1, text.size(), stdout);
  if (!options.json_path.empty()) {
    return write_file_atomically(options.json_path,
                                 json_report(options.run_path, header, summary, *temperature));
  }
  return Status::ok_status();
}

}  // namespace

void add_inspect_command(CLI::App& app, const GlobalOptions&, CommandList& commands) {
  auto options = std::make_shared<InspectOptions>();
  CLI::App* sub = app.add_subcommand(
      "inspect", "What a run file holds: provenance, settings, chains, kept samples, status");
  sub->add_option("RUN.h5", options->run_path, "The run file")->required();
  sub->add_option("--json", options->json_path, "Also write the facts as JSON to this file");
  commands.push_back({sub, [options] { return run_inspect(*options); }});
}

}  // namespace credence::cli
