// credence's help pages: sections in the order of the work, one heading style, examples.
#include "cli/help_layout.h"

#include <fmt/format.h>

#include <algorithm>
#include <map>
#include <sstream>

namespace credence::cli {
namespace {

constexpr std::size_t kWidth = 88;      // the page never runs wider
constexpr std::size_t kNameColumn = 28;  // where descriptions start

// Which section a flag belongs to. "command:--flag" overrides "--flag" where a flag means
// something else in that command.
const std::map<std::string_view, std::string_view>& flag_sections() {
  static const std::map<std::string_view, std::string_view> table = {
      // Data: what is read and how it is split.
      {"--target", "data"}, {"--delimiter", "data"}, {"--na", "data"},
      {"--categorical", "data"}, {"--drop", "data"}, {"--id", "data"}, {"--impute", "data"},
      {"--unseen", "data"}, {"--test-fraction", "data"}, {"--val-fraction", "data"},
      {"--seed", "data"}, {"--split", "data"}, {"--truth", "data"}, {"--scenario", "data"},
      {"--rows", "data"}, {"--positive-class", "data"}, {"--keep", "data"},
      {"--data", "data"},
      // Network: the model's shape and prior.
      {"--net", "network"}, {"--hidden", "network"}, {"--activation", "network"},
      {"--prior-scale", "network"}, {"--linear-path", "network"},
      // Method: the update rule and its settings.
      {"--method", "method"}, {"--methods", "method"}, {"--lr", "method"},
      {"--step-size", "method"}, {"--step-sizes", "method"}, {"--temperature", "method"},
      {"--tempering", "method"}, {"--schedule", "method"}, {"--cycles", "method"},
      {"--friction", "method"}, {"--max-move", "method"}, {"--speed", "method"},
      {"--mass", "method"}, {"--fixed-mass", "method"}, {"--leapfrog", "method"},
      {"--target-accept", "method"}, {"--temperature-scale", "method"},
      {"--exploration", "method"}, {"--thermostat-gain", "method"}, {"--masses", "method"}, {"--max-moves", "method"},
      // Budget: how much work, on how many chains and threads.
      {"--chains", "budget"}, {"--burn-in", "budget"}, {"--thin", "budget"},
      {"--samples", "budget"}, {"--batch", "budget"}, {"--steps", "budget"},
      {"--epochs", "budget"}, {"--check-every", "budget"}, {"--patience", "budget"},
      {"--min-steps", "budget"}, {"--chain-seed", "budget"}, {"--threads", "budget"},
      {"--max-memory", "budget"}, {"--resume", "budget"}, {"--extend-seconds", "budget"},
      {"--ksd-draws", "budget"},
      // Output: what is written where.
      {"--out", "output"}, {"--force", "output"}, {"--json", "output"}, {"--plot", "output"},
      {"--bins", "output"}, {"--binning", "output"}, {"--bootstrap", "output"},
      {"--save-temperature", "output"}, {"--flag-above", "output"}, {"--flag-by", "output"},
      {"--flush-seconds", "output"}, {"--all", "output"}, {"--list", "output"},
      // Decisions drawn from the probabilities (issue 19, item 1), when present.
      {"--threshold", "output"}, {"--cost-fp", "output"}, {"--cost-fn", "output"},
      {"--target-sensitivity", "output"}, {"--level", "output"}, {"--interval", "output"},
      {"--outside-above", "output"},
      // General: every command.
      {"--help", "general"}, {"--quiet", "general"}, {"--log-level", "general"},
      {"--version", "general"},
      // Per command.
      {"assess:--samples", "method"}, {"predict:--samples", "method"},
      {"report:--samples", "method"}, {"assess:--seed", "output"},
  };
  return table;
}

// The placeholder after a flag that takes a value.
const std::map<std::string_view, std::string_view>& flag_values() {
  static const std::map<std::string_view, std::string_view> table = {
      {"--target", "COLUMN"}, {"--id", "COLUMN,..."}, {"--drop", "COLUMN,..."},
      {"--categorical", "COLUMN,..."}, {"--keep", "COLUMN,..."}, {"--delimiter", "CHAR"},
      {"--na", "TEXT,..."}, {"--out", "PATH"}, {"--json", "FILE"}, {"--plot", "FILE"},
      {"--truth", "FILE"}, {"--resume", "RUN.h5"}, {"--net", "FILE"}, {"--hidden", "W,W,..."},
      {"--methods", "NAME,..."}, {"--step-sizes", "LIST|FROM:TO:N"},
      {"--masses", "LIST|FROM:TO:N"}, {"--max-moves", "LIST|FROM:TO:N"},
      {"--save-temperature", "RUN.h5"}, {"--max-memory", "SIZE"}, {"--data", "FILE"},
  };
  return table;
}

std::string section_of(const CLI::Option* option, std::string_view command) {
  const auto& table = flag_sections();
  if (!option->nonpositional()) return "arguments";
  for (const std::string& name : option->get_lnames()) {
    const std::string flag = "--" + name;
    if (auto it = table.find(fmt::format("{}:{}", command, flag)); it != table.end()) {
      return std::string(it->second);
    }
    if (auto it = table.find(flag); it != table.end()) return std::string(it->second);
  }
  return "other";
}

std::string value_placeholder(const CLI::Option* option) {
  if (option->get_items_expected_max() == 0) return "";  // a switch
  for (const std::string& name : option->get_lnames()) {
    const auto& table = flag_values();
    if (auto it = table.find("--" + name); it != table.end()) return std::string(it->second);
  }
  const std::string type = option->get_type_name();
  if (type == "INT" || type == "UINT") return "N";
  if (type == "FLOAT") return "X";
  return "TEXT";
}

std::string option_label(const CLI::Option* option) {
  if (!option->nonpositional()) return option->get_name(true);
  std::string label;
  for (const std::string& s : option->get_snames()) label += (label.empty() ? "-" : ", -") + s;
  for (const std::string& l : option->get_lnames()) label += (label.empty() ? "--" : ", --") + l;
  const std::string value = value_placeholder(option);
  return value.empty() ? label : label + " " + value;
}

// `text` broken at spaces into lines of at most `width` bytes.
std::vector<std::string> wrap(std::string_view text, std::size_t width) {
  std::vector<std::string> lines(1);
  std::istringstream words{std::string(text)};
  for (std::string word; words >> word;) {
    std::string& line = lines.back();
    if (!line.empty() && line.size() + 1 + word.size() > width) {
      lines.emplace_back(word);
    } else {
      line += (line.empty() ? "" : " ") + word;
    }
  }
  return lines;
}

// A name and its description in two columns; the description wraps under itself.
void entry(std::string& out, std::string_view name, std::string_view description) {
  const std::vector<std::string> lines = wrap(description, kWidth - kNameColumn);
  std::string first = "  " + std::string(name);
  if (first.size() + 2 > kNameColumn) {
    out += first + "\n";
    first.clear();
  }
  for (std::size_t i = 0; i < lines.size(); ++i) {
    std::string left = i == 0 ? first : "";
    left.resize(kNameColumn, ' ');
    out += left + lines[i] + "\n";
  }
}

std::string describe(const CLI::Option* option) {
  const auto& names = option->get_lnames();
  if (std::find(names.begin(), names.end(), "help") != names.end()) return "Show this page";
  if (std::find(names.begin(), names.end(), "version") != names.end()) {
    return "Show credence's version";
  }
  std::string text = option->get_description();
  const std::string fallback = option->get_default_str();
  if (!fallback.empty() && text.find("default") == std::string::npos) {
    text += fmt::format(" [default {}]", fallback);
  }
  if (option->get_required() && text.find("required") == std::string::npos) text += " [required]";
  return text;
}

// Options of `app` and of its unnamed option groups, in the order they were added (an
// option group carries a help flag of its own, which is the command's one again).
void collect(const CLI::App* app, std::vector<const CLI::Option*>& out, bool group = false) {
  for (const CLI::Option* option : app->get_options()) {
    if (!group || option != app->get_help_ptr()) out.push_back(option);
  }
  for (const CLI::App* sub : app->get_subcommands([](const CLI::App* s) {
         return s->get_name().empty();
       })) {
    collect(sub, out, true);
  }
}

// The commands in the order of the work; any not named here follow in the order added.
std::vector<const CLI::App*> ordered_commands(const CLI::App* app) {
  constexpr std::string_view kOrder[] = {"synth",   "schema", "train", "diagnose",
                                         "assess",  "predict", "compare", "sweep",
                                         "report",  "inspect", "merge"};
  std::vector<const CLI::App*> subs = app->get_subcommands([](const CLI::App* sub) {
    return !sub->get_name().empty();
  });
  const auto rank = [&](const CLI::App* sub) {
    return std::find(std::begin(kOrder), std::end(kOrder), sub->get_name()) - std::begin(kOrder);
  };
  std::stable_sort(subs.begin(), subs.end(),
                   [&](const CLI::App* a, const CLI::App* b) { return rank(a) < rank(b); });
  return subs;
}

void heading(std::string& out, std::string_view name) {
  if (!out.empty()) out += "\n";
  out += std::string(name) + "\n";
}

std::string usage_line(const CLI::App* app, const std::string& path,
                       const std::vector<const CLI::Option*>& options) {
  std::string line = path;
  if (app->get_parent() == nullptr) return line + " COMMAND [flags]   (credence COMMAND --help)";
  for (const CLI::Option* option : options) {
    if (option->nonpositional()) continue;
    const std::string name = option->get_name(true);
    const bool many = option->get_items_expected_max() > 1;
    line += " " + (option->get_required() ? name : "[" + name + "]") + (many ? " ..." : "");
  }
  for (const CLI::Option* option : options) {
    if (option->nonpositional() && option->get_required()) line += " " + option_label(option);
  }
  return line + " [flags]";
}

}  // namespace

std::string HelpLayout::make_help(const CLI::App* app, std::string /*name*/,
                                  CLI::AppFormatMode /*mode*/) const {
  const bool top = app->get_parent() == nullptr;
  const std::string command = top ? "" : app->get_name();
  const std::string path = top ? "credence" : "credence " + command;
  std::vector<const CLI::Option*> options;
  collect(app, options);
  if (!top) {  // the top page's flags that a command also takes (CLI11 fallthrough)
    for (const CLI::Option* option : app->get_parent()->get_options()) {
      if (option->nonpositional() && option != app->get_parent()->get_help_ptr() &&
          option != app->get_parent()->get_version_ptr()) {
        options.push_back(option);
      }
    }
  }

  std::string description = app->get_description();
  if (description.rfind(path + ": ", 0) == 0) description.erase(0, path.size() + 2);
  std::string out = path + ": ";
  for (const std::string& line : wrap(description, kWidth - path.size() - 2)) {
    out += (out.back() == ' ' ? "" : "\n" + std::string(path.size() + 2, ' ')) + line;
  }
  out += "\n";
  heading(out, "usage");
  out += "  " + usage_line(app, path, options) + "\n";

  std::map<std::string, std::vector<const CLI::Option*>> sections;
  for (const CLI::Option* option : options) sections[section_of(option, command)].push_back(option);
  for (std::string_view section : kHelpSections) {
    if (section == "commands" && top) {
      heading(out, section);
      for (const CLI::App* sub : ordered_commands(app)) {
        std::string summary = sub->get_description();
        // The first clause is enough on the overview page.
        if (const std::size_t stop = summary.find_first_of(":;"); stop != std::string::npos) {
          summary.resize(stop);
        }
        entry(out, sub->get_name(), summary);
      }
      continue;
    }
    auto it = sections.find(std::string(section));
    if (it == sections.end()) continue;
    heading(out, section);
    for (const CLI::Option* option : it->second) entry(out, option_label(option), describe(option));
  }
  const std::vector<HelpExample> examples = help_examples(command);
  if (!examples.empty()) {
    heading(out, "examples");
    for (std::size_t i = 0; i < examples.size(); ++i) {
      if (i > 0) out += "\n";
      out += fmt::format("  # {}\n", examples[i].comment);
      // Long command lines continue on the next line, as a shell reads them.
      const std::vector<std::string> pieces = wrap(examples[i].command, kWidth - 8);
      for (std::size_t k = 0; k < pieces.size(); ++k) {
        out += (k == 0 ? "  " : "      ") + pieces[k] + (k + 1 < pieces.size() ? " \\\n" : "\n");
      }
    }
  }
  return out;
}

std::vector<HelpExample> help_examples(std::string_view command) {
  // Set in credence's invented demo scenario (data/demo.csv, `credence synth`).
  static const std::map<std::string_view, std::vector<HelpExample>> table = {
      {"",
       {{"the whole job on the invented demo table",
         "credence synth --out demo.csv && credence schema demo.csv --target fault_14d"},
        {"then train, check mixing and scoring, and predict",
         "credence train demo.csv --target fault_14d --id unit_id --impute median --out run.h5"}}},
      {"synth",
       {{"the demo table and its true class probabilities (demo.truth.csv)",
         "credence synth --out demo.csv"},
        {"which scenarios there are", "credence synth --list"}}},
      {"schema",
       {{"how each column will be read, and the split sizes",
         "credence schema demo.csv --target fault_14d --id unit_id --impute median"}}},
      {"train",
       {{"a relativistic SGHMC ensemble with default budget",
         "credence train demo.csv --target fault_14d --id unit_id --impute median "
         "--method rsghmc --out run.h5"},
        {"a plain optimizer on a wider net",
         "credence train demo.csv --target fault_14d --id unit_id --impute median "
         "--method adam --hidden 64,64 --out adam.h5"},
        {"continue a run that was stopped", "credence train --resume run.h5"}}},
      {"diagnose",
       {{"do the chains agree?", "credence diagnose run.h5 --json mixing.json"}}},
      {"assess",
       {{"calibration on the held-out test rows", "credence assess run.h5 demo.csv"},
        {"equal-mass bins and a reliability plot",
         "credence assess run.h5 demo.csv --binning mass --plot reliability.svg"}}},
      {"predict",
       {{"probabilities and doubt for new rows",
         "credence predict run.h5 new.csv --out predictions.csv --id unit_id"}}},
      {"compare",
       {{"samplers against an optimizer on one split and budget",
         "credence compare demo.csv --target fault_14d --id unit_id --impute median "
         "--methods adam,sghmc,rsghmc --out cmp"}}},
      {"sweep",
       {{"how robust each method is to its learning rate",
         "credence sweep demo.csv --target fault_14d --id unit_id --impute median "
         "--methods sgld,sghmc --step-sizes 1e-3:1:7 --out swp"},
        {"rsghmc's tuning map: rest mass against the largest move per step",
         "credence sweep demo.csv --target fault_14d --id unit_id --impute median "
         "--masses 0.01:10:4 --max-moves 0.003,0.01,0.03 --out map"},
        {"rhmc's tuning map: rest mass against learning rate, 2000 passes per chain",
         "credence sweep demo.csv --target fault_14d --id unit_id --impute median "
         "--methods rhmc --masses 0.1:10:3 --step-sizes 0.003,0.01,0.03 --epochs 2000 --out rmap"}}},
      {"report",
       {{"one HTML page about a run", "credence report run.h5 demo.csv --out report.html"}}},
      {"inspect", {{"what a run file holds", "credence inspect run.h5"}}},
      {"merge",
       {{"join two runs trained with different chain seeds",
         "credence merge a.h5 b.h5 --out ab.h5"}}},
  };
  auto it = table.find(command);
  return it == table.end() ? std::vector<HelpExample>{} : it->second;
}

}  // namespace credence::cli
