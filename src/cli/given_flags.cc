// given_flags: the options a command line set, option groups included.
#include "cli/given_flags.h"

namespace credence::cli {

std::set<std::string> given_flags(const CLI::App& command) {
  std::set<std::string> given;
  for (const CLI::Option* option : command.get_options()) {
    if (option->count() == 0 || option->get_lnames().empty()) continue;
    given.insert("--" + option->get_lnames().front());
  }
  // Option groups are nameless subcommands holding their own options.
  for (const CLI::App* group :
       command.get_subcommands([](const CLI::App* app) { return app->get_name().empty(); })) {
    const std::set<std::string> inner = given_flags(*group);
    given.insert(inner.begin(), inner.end());
  }
  return given;
}

}  // namespace credence::cli
