// Entry point of the `credence` executable: parse, run one command, map its Status
// to an exit code. Library code never exits; only this file does.
#include <CLI/CLI.hpp>
#include <cstdio>
#include <fmt/format.h>

#include "cli/commands.h"
#include "cli/exit_codes.h"
#include "cli/help_layout.h"
#include "cli/logging.h"
#include "credence/version.h"

namespace {

int run(int argc, char** argv) {
  using namespace credence;
  using namespace credence::cli;

  CLI::App app{
      "credence: train uncertainty-aware classifiers on tabular data with stochastic-"
      "gradient MCMC or optimizers, and score how far their probabilities can be trusted."};
  app.formatter(std::make_shared<HelpLayout>());  // before the commands: they copy it
  app.set_version_flag("--version", std::string("credence ") + kVersion);
  app.require_subcommand(1);
  app.fallthrough();

  GlobalOptions global;
  for (int i = 0; i < argc; ++i) global.command_line += (i ? " " : "") + std::string(argv[i]);
  app.add_flag("-q,--quiet", global.quiet, "Only warnings and errors on stderr; no progress");
  app.add_option("--log-level", global.log_level, "trace, debug, info, warn, error or off")
      ->capture_default_str();

  CommandList commands;
  add_schema_command(app, global, commands);
  add_train_command(app, global, commands);
  add_predict_command(app, global, commands);
  add_assess_command(app, global, commands);
  add_diagnose_command(app, global, commands);
  add_compare_command(app, global, commands);
  add_sweep_command(app, global, commands);
  add_report_command(app, global, commands);
  add_inspect_command(app, global, commands);
  add_merge_command(app, global, commands);
  add_synth_command(app, global, commands);

  try {
    app.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return app.exit(e);
  } catch (const CLI::CallForAllHelp& e) {
    return app.exit(e);
  } catch (const CLI::CallForVersion& e) {
    return app.exit(e);
  } catch (const CLI::ParseError& e) {
    std::fprintf(stderr, "credence: %s\nRun 'credence --help' or 'credence COMMAND --help'.\n",
                 e.what());
    return kExitBadInput;
  }

  if (Status s = setup_logging(global.log_level, global.quiet); !s.ok()) {
    std::fprintf(stderr, "credence: %s\n", s.message().c_str());
    return exit_code_for(s);
  }
  for (const Command& command : commands) {
    if (!command.app->parsed()) continue;
    Status status = command.run();
    if (!status.ok()) {
      std::fprintf(stderr, "credence %s: %s\n", command.app->get_name().c_str(),
                   status.message().c_str());
    }
    return exit_code_for(status);
  }
  return kExitBadInput;
}

}  // namespace

int main(int argc, char** argv) {
  try {
    return run(argc, argv);
  } catch (const std::exception& e) {
    // Exceptions are not part of the library's contract; reaching here is a bug.
    std::fprintf(stderr, "credence: internal error: %s\nPlease report it.\n", e.what());
    return credence::cli::kExitFailed;
  }
}
