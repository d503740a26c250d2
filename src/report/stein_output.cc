// stein_text, stein_json, stein_table: diagnose's kernel Stein discrepancy.
#include "report/stein_output.h"

#include <fmt/format.h>

#include "util/json.h"

namespace credence {
namespace {

std::string number(double value) {
  return std::isfinite(value) ? fmt::format("{:.4g}", value) : "-";
}

void write_ksd(JsonWriter& j, const SteinDiscrepancy& d) {
  j.key("draws").value(d.draws);
  j.key("ksd").value(d.ksd);
  j.key("v_statistic").value(d.v_statistic);
  j.key("u_statistic").value(d.u_statistic);
}

}  // namespace

std::string stein_text(const RunStein& stein) {
  if (!stein.computed) return "kernel Stein discrepancy: " + stein.note + "\n";
  std::string out = fmt::format("kernel Stein discrepancy: {} over {} draws of all chains",
                                number(stein.pooled.ksd), stein.pooled.draws);
  std::string per_chain;
  for (const ChainStein& c : stein.chains) {
    per_chain += fmt::format("{}chain {} {} ({} of {} kept)", per_chain.empty() ? "" : ", ",
                             c.chain, number(c.ksd.ksd), c.ksd.draws, c.kept);
  }
  out += "; per chain: " + per_chain + ".\n";
  out += fmt::format(
      "  target: {}; {} training rows, {} parameters, at most {} draws per chain, "
      "{:.1f} s.\n",
      stein.target, stein.train_rows, stein.parameters, stein.max_draws_per_chain, stein.seconds);
  out += "  " + std::string(kSteinReading) + "\n";
  return out;
}

std::string stein_json(const RunStein& stein) {
  JsonWriter j;
  j.begin_object();
  j.key("computed").value(stein.computed);
  j.key("note").value(stein.note);
  j.key("target").value(stein.target);
  j.key("kernel").begin_object();
  j.key("c").value(stein.kernel.c).key("beta").value(stein.kernel.beta);
  j.end_object();
  j.key("max_draws_per_chain").value(stein.max_draws_per_chain);
  j.key("train_rows").value(stein.train_rows);
  j.key("parameters").value(stein.parameters);
  j.key("work").value(stein.work);
  if (stein.computed) {
    write_ksd(j, stein.pooled);
  } else {
    j.key("draws").value(std::int64_t{0});
    j.key("ksd").null().key("v_statistic").null().key("u_statistic").null();
  }
  j.key("per_chain").begin_array();
  for (const ChainStein& c : stein.chains) {
    j.begin_object();
    j.key("chain").value(c.chain);
    j.key("kept").value(c.kept);
    write_ksd(j, c.ksd);
    j.end_object();
  }
  j.end_array();
  j.end_object();
  return j.str();
}

TextTable stein_table(const RunStein& stein) {
  TextTable t;
  t.column("draws of").column("draws used").column("KSD").column("V (KSD^2)").column("U");
  for (const ChainStein& c : stein.chains) {
    t.add_row({fmt::format("chain {}", c.chain), fmt::format("{}", c.ksd.draws), number(c.ksd.ksd),
               number(c.ksd.v_statistic), number(c.ksd.u_statistic)});
  }
  t.add_row({"all chains", fmt::format("{}", stein.pooled.draws), number(stein.pooled.ksd),
             number(stein.pooled.v_statistic), number(stein.pooled.u_statistic)});
  return t;
}

void add_stein_html(HtmlReport& page, const std::string& label, const RunStein& stein) {
  if (!stein.computed) {
    page.note(fmt::format("{}: kernel Stein discrepancy {}", label, stein.note));
    return;
  }
  page.table(stein_table(stein),
             fmt::format("{}: kernel Stein discrepancy of the kept draws (at most {} per chain, "
                         "evenly spaced). Target: {}; {} training rows, {} parameters. {}",
                         label, stein.max_draws_per_chain, stein.target, stein.train_rows,
                         stein.parameters, kSteinReading));
}

}  // namespace credence
