// Helpers for the ensemble tests: a real header, deterministic rows, a python runner.
#pragma once

#include <gtest/gtest.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <limits>
#include <string>
#include <vector>

#include "credence/data.h"
#include "credence/ensemble.h"

namespace credence::testing {

/// A small table with numeric and categorical features and a three-class target.
inline const char* kTestCsv =
    "age,site,dose,outcome\n"
    "34,north,1.5,low\n41,south,2.0,high\n29,north,0.5,low\n55,east,3.5,mid\n"
    "62,south,4.0,high\n38,east,1.0,low\n47,north,2.5,mid\n51,south,3.0,high\n"
    "33,east,0.75,low\n58,north,3.75,mid\n44,south,2.25,high\n36,east,1.25,low\n"
    "49,north,2.75,mid\n60,south,4.25,high\n31,east,0.25,low\n53,north,3.25,mid\n";

/// A header whose preprocessing comes from the data module on kTestCsv (5 inputs, 3
/// classes). Its net has one hidden layer of (parameters - 3) / 9 units, so that
/// `parameters` must be 9 h + 3 (12, 21, 48, 57, 300, 2001, ...): a reader refuses a file
/// whose parameter count does not match its network.
inline RunHeader make_header(int chains, std::int64_t parameters, std::uint64_t seed = 5) {
  EXPECT_TRUE(parameters >= 12 && (parameters - 3) % 9 == 0)
      << parameters << " parameters: no one-hidden-layer net on 5 inputs and 3 classes has them";
  ReadOptions read;
  read.text_columns = {"outcome"};
  Result<Table> table = parse_table(kTestCsv, "clinic.csv", read);
  EXPECT_TRUE(table.ok()) << table.status().to_string();
  SchemaOptions schema_options;
  schema_options.target = "outcome";
  Result<Schema> schema = infer_schema(*table, schema_options);
  EXPECT_TRUE(schema.ok()) << schema.status().to_string();
  SplitOptions split_options;
  split_options.test_fraction = 0.25;
  split_options.val_fraction = 0.25;
  split_options.seed = seed;
  Result<Split> split = stratified_split(schema->labels, schema->num_classes(), split_options);
  EXPECT_TRUE(split.ok()) << split.status().to_string();
  Result<Preprocessing> pre = fit_preprocessing(*table, *schema, split->train, {});
  EXPECT_TRUE(pre.ok()) << pre.status().to_string();
  RunHeader h;
  h.tool_version = "0.1.0";
  h.command_line = "credence train clinic.csv --target outcome --out run.h5";
  h.created_utc = "2026-12-02T01:30:00Z";
  h.data_file = "clinic.csv";
  h.data_sha256 = sha256_hex(kTestCsv);
  h.data_rows = table->rows();
  h.train_rows = split->train;
  h.val_rows = split->validation;
  h.test_rows = split->test;
  h.preprocessing = *pre;
  h.net_text = "credence-net 1\nhidden " + std::to_string((parameters - 3) / 9) + " tanh\n";
  h.parameters = parameters;
  h.settings = {{"method", std::string("sghmc")},
                {"seed", std::int64_t{42}},
                {"step_size", 1.5e-3},
                {"friction", 0.05},
                {"thin", std::int64_t{10}}};
  h.chains = chains;
  h.samples_per_chain = 100;
  h.probe_rows = {h.val_rows.begin(), h.val_rows.end()};
  for (std::size_t r = 0; r < h.probe_rows.size(); ++r) {
    h.probe_labels.push_back(static_cast<std::int32_t>(r % h.preprocessing.class_names.size()));
  }
  h.projections = 4;
  h.layers = 2;
  h.state_template.floats["momentum"].assign(static_cast<std::size_t>(parameters), 0.0f);
  h.state_template.floats["unused"] = {};
  h.state_template.doubles["schedule"].assign(3, 0.0);
  h.state_template.words["rng"].assign(4, 0);
  h.state_template.words["batch_position"].assign(2, 0);
  return h;
}

/// theta_i of kept sample k of chain c: exact in float32, distinct per (c, k, i).
inline float theta_value(int chain, std::int64_t kept, std::int64_t i) {
  return static_cast<float>(chain * 100000 + kept * 64) + static_cast<float>(i % 64) * 0.5f;
}

/// p(y_r | x_r) stored for probe row r of kept sample `kept` (any float will do).
inline float probe_value(std::size_t r, std::int64_t kept) {
  return static_cast<float>(r + 1) / 128.0f + static_cast<float>(kept) / 1024.0f;
}

/// Appends kept sample `kept` of `chain` (step = 10 (kept + 1)) and its two trace rows.
inline Status append_rows(RunWriter& writer, int chain, std::int64_t kept) {
  const RunHeader& h = writer.header();
  std::vector<float> theta(static_cast<std::size_t>(h.parameters));
  for (std::size_t i = 0; i < theta.size(); ++i) {
    theta[i] = theta_value(chain, kept, static_cast<std::int64_t>(i));
  }
  std::vector<float> prob(h.probe_rows.size()), proj(4), norms(2);
  for (std::size_t r = 0; r < prob.size(); ++r) prob[r] = probe_value(r, kept);
  for (std::size_t j = 0; j < proj.size(); ++j)
    proj[j] = static_cast<float>(chain) - static_cast<float>(j) + 0.125f * static_cast<float>(kept);
  norms = {static_cast<float>(kept) + 1.0f, static_cast<float>(chain) + 0.5f};
  SampleRecord s;
  s.chain = chain;
  s.step = 10 * (kept + 1);
  s.index = kept;
  s.theta = theta;
  s.probe_log_lik = -0.5 * static_cast<double>(kept) - chain;
  s.probe_prob = prob;
  s.projections = proj;
  s.layer_sq_norms = norms;
  CREDENCE_RETURN_IF_ERROR(writer.append_sample(s));
  for (int t = 0; t < 2; ++t) {
    TraceRecord trace;
    trace.chain = chain;
    trace.step = 10 * kept + 5 * (t + 1);
    trace.potential = 100.0 / static_cast<double>(kept + t + 1) + chain;
    trace.accuracy = t == 0 ? 0.75 : std::numeric_limits<double>::quiet_NaN();
    trace.step_size = 1e-3;
    trace.speed_ratio = std::numeric_limits<double>::quiet_NaN();
    trace.acceptance = 0.9;
    CREDENCE_RETURN_IF_ERROR(writer.append_trace(trace));
  }
  return Status::ok_status();
}

/// The state right after kept sample `kept` of `chain` (kept + 1 samples so far).
inline ChainState state_after(const RunHeader& h, int chain, std::int64_t kept) {
  ChainState state;
  state.chain = chain;
  state.next_step = 10 * (kept + 1) + 1;
  state.kept = kept + 1;
  state.theta.resize(static_cast<std::size_t>(h.parameters));
  for (std::size_t i = 0; i < state.theta.size(); ++i) {
    state.theta[i] = theta_value(chain, kept, static_cast<std::int64_t>(i));
  }
  state.state = h.state_template;
  for (float& m : state.state.floats["momentum"])
    m = -static_cast<float>(kept) - 0.25f * static_cast<float>(chain);
  state.state.doubles["schedule"] = {static_cast<double>(kept), 0.5, -1.0 * chain};
  state.state.words["rng"] = {0x9E3779B97F4A7C15ull ^ static_cast<std::uint64_t>(kept), 1, 2,
                              static_cast<std::uint64_t>(chain)};
  state.state.words["batch_position"] = {static_cast<std::uint64_t>(kept) * 3, 7};
  return state;
}

/// Runs `script args` with Debian's python3 and returns stdout; exit code in `code`.
inline std::string run_python(const std::string& args, int& code) {
  const std::string command = std::string(CREDENCE_PYTHON) + " " + args + " 2>&1";
  std::string output;
  FILE* pipe = popen(command.c_str(), "r");
  if (pipe == nullptr) {
    code = -1;
    return output;
  }
  char buffer[4096];
  std::size_t n = 0;
  while ((n = fread(buffer, 1, sizeof buffer, pipe)) > 0) output.append(buffer, n);
  code = pclose(pipe);
  return output;
}

/// Asserts that `status` failed with `code` and that its message holds every piece.
inline void expect_failure(const Status& status, StatusCode code,
                           std::initializer_list<std::string> pieces) {
  ASSERT_FALSE(status.ok()) << "expected a failure";
  EXPECT_EQ(status.code(), code) << status.to_string();
  for (const std::string& piece : pieces) {
    EXPECT_NE(status.message().find(piece), std::string::npos)
        << "message lacks \"" << piece << "\":\n"
        << status.message();
  }
}

}  // namespace credence::testing
