// credence assess: placeholder until the command lands.
#include "cli/commands.h"

namespace credence::cli {

void add_assess_command(CLI::App& app, const GlobalOptions& /*global*/, CommandList& commands) {
  CLI::App* sub = app.add_subcommand("assess", "(not built yet)");
  commands.push_back({sub, [] { return Status::internal("credence assess is not built yet"); }});
}

}  // namespace credence::cli
