// credence diagnose: placeholder until the command lands.
#include "cli/commands.h"

namespace credence::cli {

void add_diagnose_command(CLI::App& app, const GlobalOptions& /*global*/, CommandList& commands) {
  CLI::App* sub = app.add_subcommand("diagnose", "(not built yet)");
  commands.push_back({sub, [] { return Status::internal("credence diagnose is not built yet"); }});
}

}  // namespace credence::cli
