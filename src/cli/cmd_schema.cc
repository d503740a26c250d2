// `credence schema`: how the tool reads a table (placeholder until the data module lands).
#include "cli/commands.h"

namespace credence::cli {

void add_schema_command(CLI::App& app, const GlobalOptions&, CommandList& commands) {
  auto* sub = app.add_subcommand("schema", "How credence reads a table: roles, types, classes, splits");
  commands.push_back({sub, [] { return Status::internal("schema is not implemented yet"); }});
}

}  // namespace credence::cli
