// run_tuning_map_job: the relativistic samplers' tuning map, cell by cell (`credence sweep
// --masses ...`): every cell trained through the compare job, then the map's table, files
// and heat maps. rsghmc's cells get compare's minibatch budget; rhmc's cells get the same
// passes over the training rows as full-data trajectories (rhmc_budget below).
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <filesystem>

#include "compare/tuning_map_rhmc.h"
#include "credence/budget.h"
#include "credence/plot_heatmap.h"
#include "credence/sweep.h"
#include "credence/tuning_map.h"
#include "util/atomic_file.h"
#include "util/log.h"

namespace credence {
namespace {

Status write_into(const std::string& out_dir, const std::string& name, const std::string& text) {
  return write_file_atomically((std::filesystem::path(out_dir) / name).string(), text);
}


std::string short_number(double v) { return fmt::format("{:.4g}", v); }  // as the grid tells apart

std::string cell_text(double v, int digits) {
  return std::isfinite(v) ? fmt::format("{:.{}g}", v, digits) : "-";
}

// One heat map per measure and method: rows are masses, columns the second axis.
struct Measure {
  std::string file;     // file name part: "ess", "speed", "nll", "diverged", "accept"
  std::string title;
  double TuningMeasures::*field = nullptr;  // or null: diverged chains
  std::string caption;
  bool rhmc_only = false;  // the acceptance: rsghmc has no Metropolis test
};

std::string heat_map_svg(const TuningGrid& grid, const std::vector<TuningCell>& cells,
                         Method method, const Measure& measure) {
  HeatMapChart map;
  // One rsghmc gradient reads a minibatch, one rhmc gradient every training row.
  const std::string title = measure.file != "ess" ? measure.title
                            : method == Method::kRhmc
                                ? "ESS per 1000 full-data gradients"
                                : measure.title;
  map.title = fmt::format("{}: {}", method_name(method), title);
  map.y_label = "rest mass m";
  map.x_label = grid.axis == TuningAxis::kMaxMove ? "max move per step" : "learning rate";
  for (double m : grid.masses) map.y_labels.push_back(short_number(m));
  for (double v : grid.values) map.x_labels.push_back(short_number(v));
  map.no_value_label = "not measured";
  std::size_t index = 0;
  for (std::size_t i = 0; i < cells.size(); ++i) {
    const TuningCell& c = cells[i];
    if (c.method != method) continue;
    map.values.push_back(measure.field ? c.measures.*measure.field
                                       : static_cast<double>(c.measures.diverged_chains));
    map.diverged.push_back(c.measures.diverged_chains > 0);
    if (choose_tuning_cell(cells, method) == i) map.chosen = index;
    ++index;
  }
  return render_heat_map(map);
}

}  // namespace

Result<SweepSummary> run_tuning_map_job(TuningMapRequest request) {
  Result<TuningGrid> grid =
      parse_tuning_grid(request.masses, request.max_moves, request.step_sizes, request.methods);
  if (!grid.ok()) return grid.status();
  CREDENCE_RETURN_IF_ERROR(check_rhmc_flags(request, *grid));
  CompareRequest& compare = request.compare;
  compare.stein_draws_per_chain = 0;  // the map measures ESS and speed, not sample quality
  const bool by_move = grid->axis == TuningAxis::kMaxMove;
  std::vector<TuningCell> cells;  // in the order of compare.entries
  for (Method m : grid->methods) {
    for (double mass : grid->masses) {
      for (double v : grid->values) {
        const std::string name(method_name(m));
        CompareEntry entry;
        entry.method = m;
        if (!by_move) entry.learning_rate = v;
        entry.label = fmt::format("{} m={} {}={}", name, short_number(mass),
                                  by_move ? "max move" : "lr", short_number(v));
        entry.file_stem = fmt::format("{}_m{}_{}{}", name, short_number(mass), by_move ? "mm" : "lr",
                                      short_number(v));
        TuningCell cell;
        cell.method = m;
        cell.mass = mass;
        cell.value = v;
        cell.run_file = entry.file_stem + ".h5";
        cells.push_back(std::move(cell));
        compare.entries.push_back(std::move(entry));
      }
    }
  }
  // run_compare fills `budget` before its first training, so both hooks below read it.
  CompareBudget budget;
  const bool has_rhmc = std::find(grid->methods.begin(), grid->methods.end(), Method::kRhmc) !=
                        grid->methods.end();
  const bool only_rhmc = std::all_of(grid->methods.begin(), grid->methods.end(),
                                     [](Method m) { return m == Method::kRhmc; });
  compare.adjust_request = [&cells, &budget, &compare, by_move](std::size_t i, TrainRequest& r) {
    RelativisticSettings& s = r.settings.sampler.relativistic;
    s.mass = cells[i].mass;
    s.adapt_mass = false;  // a cell keeps the mass it names
    // A given max move is kept as given (not sized to the table, budget.h).
    if (by_move) s.max_move = cells[i].value;
    if (r.budget_given) r.budget_given->max_move = by_move;
    if (cells[i].method == Method::kRhmc) {
      const RhmcBudget b = rhmc_budget(compare, budget);
      r.settings.chains.burn_in = b.burn_in;
      r.settings.chains.thin = b.thin;
      r.settings.chains.samples = b.samples;
    }
  };
  std::string rhmc_line;
  if (has_rhmc) {
    compare.on_budget = [told = compare.on_budget, &budget, &compare, &rhmc_line,
                         only_rhmc](const std::string& line) {
      const RhmcBudget b = rhmc_budget(compare, budget);
      rhmc_line = rhmc_budget_line(compare, b);
      if (!b.note.empty()) log().warn("{}", b.note);
      // An rhmc-only map spends no minibatch steps: its line alone says the budget.
      if (told) told(only_rhmc ? rhmc_line : line + "\n" + rhmc_line);
    };
  }
  Result<std::vector<CompareOutcome>> outcomes = run_compare(compare, &budget);
  if (!outcomes.ok()) return outcomes.status();
  const double minibatches_per_pass =
      static_cast<double>(steps_per_pass(budget.train_rows, compare.batch_rows));

  for (std::size_t i = 0; i < outcomes->size(); ++i) {
    const CompareOutcome& o = (*outcomes)[i];
    TuningCell& cell = cells[i];
    if (o.run) {
      cell.trained = true;
      cell.measures = tuning_measures(o.run->diagnostics, o.run->assessment.scored.metrics.nll,
                                      o.run->summary.chain_status,
                                      cell.method == Method::kRhmc ? 1.0 : minibatches_per_pass);
      if (cell.method == Method::kRhmc) {
        Result<double> divergent = divergent_trajectories(o.run_path);
        if (!divergent.ok()) return divergent.status();
        cell.measures.divergent_trajectories = *divergent;
      }
    } else {
      cell.measures = tuning_measures(std::nullopt, std::nan(""), {});
      cell.measures.chains = compare.chains;
      cell.measures.diverged_chains = o.diverged ? compare.chains : 0;
    }
  }

  TextTable table;
  table.column("method", ColumnAlign::kLeft).column("mass").column(by_move ? "max move" : "learning rate");
  // No per-column highlight: the chosen column names the one cell the rule picks.
  table.column("ESS / 1000 grads").column("ESS / 1000 passes").column("mean |v|/c");
  if (has_rhmc) table.column("accept");
  table.column("test NLL").column("diverged").column("chosen", ColumnAlign::kLeft);
  for (std::size_t i = 0; i < cells.size(); ++i) {
    const TuningCell& c = cells[i];
    const TuningMeasures& m = c.measures;
    std::vector<std::string> row = {std::string(method_name(c.method)), short_number(c.mass),
                                    short_number(c.value), cell_text(m.ess_per_1000_grads, 3),
                                    cell_text(m.ess_per_1000_passes, 3), cell_text(m.speed_ratio, 3)};
    if (has_rhmc) row.push_back(cell_text(m.acceptance, 3));
    row.push_back(cell_text(m.test_nll, 4));
    row.push_back(fmt::format("{} of {}", m.diverged_chains, m.chains));
    row.push_back(choose_tuning_cell(cells, c.method) == i ? "chosen" : "");
    table.add_row(row);
  }

  const std::vector<Measure> measures = {
      {"ess", "ESS per 1000 gradients",
       &TuningMeasures::ess_per_1000_grads,
       "Higher is better: bulk-ESS of the probe log-likelihood per 1000 gradients (all "
       "chains, burn-in included); an rsghmc gradient reads one minibatch, an rhmc gradient "
       "every training row, so compare the two methods by ESS per 1000 passes in the table."},
      {"speed", "mean |v|/c", &TuningMeasures::speed_ratio,
       "Mean |v|/c after burn-in (rsghmc: per step; rhmc: per trajectory). Near 1 every weight "
       "moves at the speed cap (momenta thermalise slowly); near 0 the bound rarely acts. "
       "About 0.5 is the usual target."},
      {"nll", "test NLL (nats)", &TuningMeasures::test_nll,
       "Lower is better: the ensemble's mean negative log-likelihood on the held-out rows."},
      {"diverged", "diverged chains", nullptr,
       "Chains that stopped on a non-finite potential; a crossed cell had at least one."},
      {"accept", "acceptance", &TuningMeasures::acceptance,
       "rhmc's mean Metropolis acceptance after burn-in. Dual averaging aims its step at 0.65 "
       "during burn-in; far below that, the bound eps c is too large for the energy to be "
       "kept, and far above, the trajectories are shorter than they could be.",
       true}};

  const std::string out_dir = compare.out_dir;
  const std::string rule(tuning_choice_rule());
  std::string text = fmt::format("tuning map on {}: {} trainings\n", compare.data_path,
                                 cells.size());
  if (!rhmc_line.empty()) text += rhmc_line + "\n";
  text += "\n" + render_text(table);
  text += fmt::format("\nThe chosen cell: {}.\n", rule);
  text += "A map is measured on one table, one split and one seed: re-check the chosen cell on "
          "your own data (train it with --mass, --max-move and, for rsghmc, --fixed-mass).\n";
  text += fmt::format("\n{}\n", cautions_text());
  CREDENCE_RETURN_IF_ERROR(write_into(out_dir, "sweep.txt", text));
  CREDENCE_RETURN_IF_ERROR(write_into(out_dir, "tuning_map.csv", tuning_map_csv(cells, grid->axis)));
  CREDENCE_RETURN_IF_ERROR(write_into(out_dir, "tuning_map.json", tuning_map_json(cells, grid->axis)));

  HtmlReport page(fmt::format("credence sweep: {}", compare.data_path));
  page.subtitle(fmt::format("tuning map: {} masses x {} {}, {} chains each, same budget",
                            grid->masses.size(), grid->values.size(),
                            by_move ? "max moves" : "learning rates", compare.chains));
  for (Method m : grid->methods) {
    page.section(fmt::format("Tuning map of {}", method_name(m)));
    page.paragraph(fmt::format(
        "Each cell is one training at a fixed rest mass (rows) and {} (columns). The framed "
        "cell is chosen by {}. A crossed cell had a diverged chain.",
        by_move ? "per-step move bound, which sets the speed of light" : "learning rate", rule));
    if (m == Method::kRhmc && !rhmc_line.empty()) page.paragraph(rhmc_line + ".");
    for (const Measure& measure : measures) {
      if (measure.rhmc_only && m != Method::kRhmc) continue;
      const std::string svg = heat_map_svg(*grid, cells, m, measure);
      CREDENCE_RETURN_IF_ERROR(
          write_into(out_dir, fmt::format("{}_{}.svg", method_name(m), measure.file), svg));
      page.figure(svg, measure.caption);
    }
  }
  page.section("Every cell");
  page.table(table, "Every training of the map on the same split and gradient budget.");
  page.note("A map is measured on one table, one split and one seed. Re-check the chosen cell "
            "on your own data before relying on it.", NoteKind::kWarning);
  page.cautions();
  CREDENCE_RETURN_IF_ERROR(write_into(out_dir, "report.html", page.render()));
  SweepSummary summary;
  summary.outcomes = std::move(*outcomes);
  summary.table = std::move(table);
  summary.text = std::move(text);
  return summary;
}

}  // namespace credence
