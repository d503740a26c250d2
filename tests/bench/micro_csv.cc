// CSV parsing speed of the data module on an in-memory table of numeric columns (DESIGN.md 6:
// >= 250 MB/s on one core): the scanner alone, parse_number alone, and parse_table (scan +
// number parsing + column storage: what `credence train` and `schema` do first).
// Rows: CREDENCE_BENCH_CSV_ROWS (default 200000); columns: 49 numbers + an integer label.
#include <benchmark/benchmark.h>

#include <cstdint>
#include <cstddef>
#include <cstdio>
#include <cstdlib>
#include <random>
#include <string>

#include "credence/data.h"
#include "data/csv_reader.h"

namespace {

const std::string& table_bytes() {
  static const std::string bytes = [] {
    const char* env = std::getenv("CREDENCE_BENCH_CSV_ROWS");
    const long rows = env != nullptr ? std::atol(env) : 200000;
    const int columns = 49;
    std::mt19937_64 engine(20261202);
    std::normal_distribution<double> normal;
    std::string out;
    for (int j = 0; j < columns; ++j) out += "x" + std::to_string(j) + ",";
    out += "label\n";
    char cell[32];
    for (long r = 0; r < rows; ++r) {
      for (int j = 0; j < columns; ++j) {
        const int len = std::snprintf(cell, sizeof cell, "%.6g,", normal(engine));
        out.append(cell, static_cast<std::size_t>(len));
      }
      out += (r % 2 == 0) ? "0\n" : "1\n";
    }
    return out;
  }();
  return bytes;
}

void BM_ScanRecords(benchmark::State& state) {
  const std::string& bytes = table_bytes();
  for (auto _ : state) {
    credence::data::CsvScanner scanner(bytes, ',', "bench.csv");
    credence::data::CsvRecord record;
    bool got = true;
    std::size_t fields = 0;
    while (got) {
      if (!scanner.next(record, got).ok()) state.SkipWithError("scan failed");
      fields += record.fields.size();
    }
    benchmark::DoNotOptimize(fields);
  }
  state.SetBytesProcessed(state.iterations() * static_cast<std::int64_t>(bytes.size()));
}

void BM_ScanAndParseNumbers(benchmark::State& state) {
  const std::string& bytes = table_bytes();
  for (auto _ : state) {
    credence::data::CsvScanner scanner(bytes, ',', "bench.csv");
    credence::data::CsvRecord record;
    bool got = true;
    double sum = 0;
    if (!scanner.next(record, got).ok()) state.SkipWithError("scan failed");  // header
    while (true) {
      if (!scanner.next(record, got).ok()) state.SkipWithError("scan failed");
      if (!got) break;
      for (std::string_view cell : record.fields) {
        double v = 0;
        if (credence::data::parse_number(cell, v)) sum += v;
      }
    }
    benchmark::DoNotOptimize(sum);
  }
  state.SetBytesProcessed(state.iterations() * static_cast<std::int64_t>(bytes.size()));
}

// state.range(0): 1 = one thread (the split threshold out of reach), 2 = two threads where
// OpenMP gives two (the default threshold, as `credence train` and `schema` read).
void BM_ParseTable(benchmark::State& state) {
  const std::string& bytes = table_bytes();
  credence::ReadOptions options;
  if (state.range(0) == 1) options.parallel_above_bytes = SIZE_MAX;
  for (auto _ : state) {
    auto table = credence::parse_table(bytes, "bench.csv", options);
    if (!table.ok()) state.SkipWithError("parse_table failed");
    benchmark::DoNotOptimize(table);
  }
  state.SetBytesProcessed(state.iterations() * static_cast<std::int64_t>(bytes.size()));
}

}  // namespace

BENCHMARK(BM_ScanRecords)->Unit(benchmark::kMillisecond)->MinTime(1.0);
BENCHMARK(BM_ScanAndParseNumbers)->Unit(benchmark::kMillisecond)->MinTime(1.0);
BENCHMARK(BM_ParseTable)->Arg(1)->Arg(2)->Unit(benchmark::kMillisecond)->MinTime(1.0)->UseRealTime();
BENCHMARK_MAIN();
