// predict_csv: a CSV file through a Predictor, block by block, into a predictions CSV.
#include <fmt/format.h>
#include <omp.h>

#include <algorithm>
#include <array>
#include <iterator>
#include <memory>

#include "credence/predict.h"
#include "predict/temp_output.h"
#include "util/log.h"

namespace credence {
namespace {

// RFC 4180: quote a field holding a comma, a quote or a line break (or edge blanks,
// which readers may trim), doubling its quotes.
void append_field(std::string& out, std::string_view text) {
  const bool plain = text.find_first_of(",\"\r\n") == std::string_view::npos &&
                     (text.empty() || (text.front() != ' ' && text.back() != ' '));
  if (plain) {
    out += text;
    return;
  }
  out += '"';
  for (char c : text) {
    if (c == '"') out += '"';
    out += c;
  }
  out += '"';
}

// The cell as written in the file; "" where it was missing. Passed-through columns are
// read as text, so numbers keep their spelling ("007" stays "007").
std::string_view cell_text(const TableColumn& column, std::int64_t row) {
  const std::int32_t code = column.codes[static_cast<std::size_t>(row)];
  return code < 0 ? std::string_view()
                  : std::string_view(column.levels[static_cast<std::size_t>(code)]);
}

bool contains(const std::vector<std::string>& names, std::string_view name) {
  return std::find(names.begin(), names.end(), name) != names.end();
}

std::string quoted_list(const std::vector<std::string>& names) {
  std::string out;
  for (const std::string& name : names) out += (out.empty() ? "'" : ", '") + name + "'";
  return out;
}

// What one thread reuses from block to block.
struct ThreadSlot {
  std::unique_ptr<Workspace<float>> workspace;
  EnsembleAverager averager;
  Prediction prediction;
  std::vector<std::int64_t> rows;
};

// One block's output, kept until the blocks before it are written.
struct BlockResult {
  std::string text;
  Status status;
  std::int64_t flagged = 0;
  std::int64_t clamped = 0;
  std::int64_t outside = 0;
  std::vector<UnseenCategories> unseen;
};

struct OutputColumns {
  bool row_number = false;  // a 1-based `row` column first, when no id column is passed
  std::vector<int> passed;  // table columns passed through: ids, kept columns, the target
  bool has_refer = false;
  std::vector<Index> interval_classes;  // classes whose interval is written
};

// "90" for 0.9, "97.5" for 0.975: the level as it goes into a column name.
std::string level_text(double level) { return fmt::format("{:g}", level * 100); }

// The class written in `predicted`: the positive class where its probability reaches the
// threshold, else the other one; with no threshold, the most probable class.
Index decided_class(const Prediction& p, Index b, const PredictCsvOptions& options) {
  if (!options.threshold || p.probabilities.rows() != 2) {
    return p.predicted[static_cast<std::size_t>(b)];
  }
  const Index positive = options.positive_class;
  return p.probabilities(positive, b) >= *options.threshold ? positive : 1 - positive;
}

void format_block(const Predictor& predictor, const Table& table, const OutputColumns& columns,
                  const PredictCsvOptions& options, const ThreadSlot& slot,
                  std::int64_t rows_before, BlockResult& result) {
  const Prediction& p = slot.prediction;
  const std::vector<std::string>& classes = predictor.preprocessing().class_names;
  std::string& text = result.text;
  text.clear();
  result.flagged = 0;
  result.outside = 0;
  auto out = std::back_inserter(text);
  for (std::size_t i = 0; i < slot.rows.size(); ++i) {
    const auto b = static_cast<Index>(i);
    if (columns.row_number) fmt::format_to(out, "{},", rows_before + slot.rows[i] + 1);
    for (int j : columns.passed) {
      append_field(text, cell_text(table.columns[static_cast<std::size_t>(j)], slot.rows[i]));
      text += ',';
    }
    for (Index k = 0; k < p.probabilities.rows(); ++k) {
      fmt::format_to(out, "{:.9g},", p.probabilities(k, b));
    }
    const Index decided = decided_class(p, b, options);
    append_field(text, classes[static_cast<std::size_t>(decided)]);
    fmt::format_to(out, ",{:.9g},{:.9g},{:.9g},{:.9g}", p.probabilities(decided, b), p.entropy(b),
                   p.expected_entropy(b), p.mutual_information(b));
    if (columns.has_refer) {
      const double doubt =
          options.flag_by == FlagBy::kEntropy ? p.entropy(b) : p.mutual_information(b);
      const bool refer = doubt > *options.flag_above;
      result.flagged += refer ? 1 : 0;
      text += refer ? ",1" : ",0";
    }
    for (Index k : columns.interval_classes) {
      fmt::format_to(out, ",{:.9g},{:.9g}", p.interval_lo(k, b), p.interval_hi(k, b));
    }
    const bool outside = p.farthest_z(b) > options.outside_z || p.unseen_inputs(b) > 0;
    result.outside += outside ? 1 : 0;
    fmt::format_to(out, ",{:.9g},{:.9g},{},{}", p.farthest_z(b), p.rms_z(b), p.unseen_inputs(b),
                   outside ? 1 : 0);
    text += '\n';
  }
}

// Sums per column; blocks arrive in input order, so the first location stays the earliest.
void add_unseen(const std::vector<UnseenCategories>& block, std::vector<UnseenCategories>& total) {
  for (const UnseenCategories& u : block) {
    auto same = [&](const UnseenCategories& t) { return t.column == u.column; };
    if (auto it = std::find_if(total.begin(), total.end(), same); it != total.end()) {
      it->count += u.count;
    } else {
      total.push_back(u);
    }
  }
}

}  // namespace

std::string_view flag_by_name(FlagBy flag_by) {
  return flag_by == FlagBy::kEntropy ? "entropy" : "mi";
}

Result<PredictCsvSummary> predict_csv(const Predictor& predictor, const std::string& input_path,
                                      const std::string& output_path,
                                      const PredictCsvOptions& options) {
  const Preprocessing& pre = predictor.preprocessing();
  PredictCsvSummary summary;
  summary.samples = predictor.num_samples();

  std::vector<std::string> ids = options.id_columns;
  if (ids.empty()) {
    for (const ColumnSpec& c : pre.columns) {
      if (c.role == ColumnRole::kId) ids.push_back(c.name);
    }
  }
  const bool binary = pre.class_names.size() == 2;
  if ((options.threshold || options.positive_class != 1) &&
      !(binary && (options.positive_class == 0 || options.positive_class == 1))) {
    return Status::invalid_input(fmt::format(
        "a threshold and a positive class apply to two-class runs; this run has {} classes",
        pre.class_names.size()));
  }
  if (options.threshold && !(*options.threshold > 0 && *options.threshold < 1)) {
    return Status::invalid_input(fmt::format(
        "threshold {}: give a probability strictly between 0 and 1, e.g. 0.5", *options.threshold));
  }
  if (!(options.interval_level >= 0 && options.interval_level < 1)) {
    return Status::invalid_input(fmt::format(
        "interval level {}: give a fraction in (0, 1), e.g. 0.9 (or 0 for none)",
        options.interval_level));
  }
  if (!(options.outside_z > 0)) {
    return Status::invalid_input(fmt::format(
        "outside-range limit {}: give a positive number of standard deviations, e.g. 10",
        options.outside_z));
  }
  // Passed-through columns are read as text so they come out exactly as written.
  ReadOptions read = options.read;
  for (const std::string& name : text_columns_of(pre)) read.text_columns.push_back(name);
  for (const std::string& name : ids) read.text_columns.push_back(name);
  for (const std::string& name : options.keep_columns) read.text_columns.push_back(name);
  // The file streams through in pieces of whole records, so memory holds two pieces (and
  // one block per thread) whatever the number of rows.
  Result<CsvChunkReader> reader = CsvChunkReader::open(input_path, read, options.chunk_bytes);
  if (!reader.ok()) return reader.status();
  // Two pieces: the threads predict one while the next is read.
  std::array<Table, 2> pieces;
  int current = 0;
  bool got = false;
  CREDENCE_RETURN_IF_ERROR(reader->next(pieces[0], got));
  if (!got) {
    return Status::invalid_input(fmt::format(
        "{}: the header has no data rows below it; add the rows to predict", input_path));
  }
  const Table* table = &pieces[0];

  OutputColumns columns;
  columns.has_refer = options.flag_above.has_value();
  for (const std::string& name : ids) {
    const int j = table->find_column(name);
    if (j >= 0) {
      columns.passed.push_back(j);
      summary.id_columns.push_back(name);
    } else if (!options.id_columns.empty()) {
      return Status::invalid_input(fmt::format(
          "{}: id column '{}' is not in the header; name a column present ({})", input_path,
          name, table->column_hint(name)));
    }
  }
  columns.row_number = columns.passed.empty();
  summary.row_numbers = columns.row_number;
  for (const std::string& name : options.keep_columns) {
    const int j = table->find_column(name);
    if (j < 0) {
      return Status::invalid_input(fmt::format(
          "{}: column '{}' to keep is not in the header; name a column present ({})",
          input_path, name, table->column_hint(name)));
    }
    if (!contains(ids, name) && name != pre.target) columns.passed.push_back(j);
  }
  if (const int j = table->find_column(pre.target); j >= 0 && !contains(ids, pre.target)) {
    columns.passed.push_back(j);
    summary.target_passed = true;
  }
  std::vector<std::string> known;
  for (const ColumnSpec& c : pre.columns) known.push_back(c.name);
  for (const TableColumn& c : table->columns) {
    if (!contains(known, c.name) && !contains(ids, c.name) &&
        !contains(options.keep_columns, c.name))
      summary.ignored_columns.push_back(c.name);
  }
  if (!summary.ignored_columns.empty()) {
    log().info("{}: ignoring column{} the model does not use: {}", input_path,
               summary.ignored_columns.size() == 1 ? "" : "s",
               quoted_list(summary.ignored_columns));
  }

  if (options.interval_level > 0) {
    if (binary) {
      columns.interval_classes.push_back(options.positive_class);
    } else {
      for (std::size_t k = 0; k < pre.class_names.size(); ++k) {
        columns.interval_classes.push_back(static_cast<Index>(k));
      }
    }
  }
  std::string header = columns.row_number ? "row," : "";
  for (int j : columns.passed) {
    append_field(header, table->columns[static_cast<std::size_t>(j)].name);
    header += ',';
  }
  for (const std::string& name : pre.class_names) {
    append_field(header, "p_" + name);
    header += ',';
  }
  header += "predicted,confidence,entropy,expected_entropy,mutual_information";
  if (columns.has_refer) header += ",refer";
  const std::string level = level_text(options.interval_level);
  for (Index k : columns.interval_classes) {
    const std::string& name = pre.class_names[static_cast<std::size_t>(k)];
    header += ',';
    append_field(header, "p_" + name + "_lo" + level);
    header += ',';
    append_field(header, "p_" + name + "_hi" + level);
  }
  header += ",farthest_z,rms_z,unseen_inputs,outside\n";

  Result<predict::TempOutput> output = predict::TempOutput::create(output_path);
  if (!output.ok()) return output.status();
  CREDENCE_RETURN_IF_ERROR(output->write(header));

  // Blocks are cut the same way whatever the thread count, and each row's numbers depend
  // only on its own block, so the output is byte-identical for any OMP_NUM_THREADS. A
  // piece is cut into an even number of equal blocks (so two threads finish together),
  // which the threads take as tasks while one of them reads the next piece. Memory holds
  // two pieces, one workspace per thread and one piece's output text.
  const int threads = std::max(1, omp_get_max_threads());
  std::vector<ThreadSlot> slots(static_cast<std::size_t>(threads));
  for (ThreadSlot& slot : slots) slot.averager.set_interval(options.interval_level);
  std::vector<BlockResult> results;
  std::int64_t rows_before = 0;  // data rows in the pieces already written
  while (got) {
    const std::int64_t n = table->rows();
    std::int64_t blocks = (n + predictor.block_rows() - 1) / predictor.block_rows();
    if (blocks > 1 && blocks % 2 == 1) ++blocks;
    const std::int64_t block_rows = (n + blocks - 1) / blocks;
    blocks = (n + block_rows - 1) / block_rows;
    results.resize(static_cast<std::size_t>(blocks));
    auto predict_block = [&](std::int64_t block) {
      ThreadSlot& slot = slots[static_cast<std::size_t>(omp_get_thread_num())];
      BlockResult& result = results[static_cast<std::size_t>(block)];
      if (!slot.workspace)
        slot.workspace = std::make_unique<Workspace<float>>(predictor.make_workspace());
      const std::int64_t begin = block * block_rows;
      const std::int64_t end = std::min(n, begin + block_rows);
      slot.rows.resize(static_cast<std::size_t>(end - begin));
      for (std::int64_t r = begin; r < end; ++r) slot.rows[static_cast<std::size_t>(r - begin)] = r;
      result.status =
          predictor.predict_rows(*slot.workspace, slot.averager, *table, slot.rows, slot.prediction);
      if (!result.status.ok()) return;
      format_block(predictor, *table, columns, options, slot, rows_before, result);
      result.clamped = slot.prediction.clamped;
      result.unseen = slot.prediction.unseen;
    };
    Status read_status;
    bool next_got = false;
    Table& next = pieces[static_cast<std::size_t>(1 - current)];
#pragma omp parallel num_threads(threads)
#pragma omp single
    {
      for (std::int64_t block = 0; block < blocks; ++block) {
#pragma omp task firstprivate(block)
        predict_block(block);
      }
      read_status = reader->next(next, next_got);
    }  // the barrier here waits for every task
    // In block order, so the error reported is from the earliest bad block.
    for (std::int64_t block = 0; block < blocks; ++block) {
      const BlockResult& result = results[static_cast<std::size_t>(block)];
      CREDENCE_RETURN_IF_ERROR(result.status);
      CREDENCE_RETURN_IF_ERROR(output->write(result.text));
      summary.rows += std::min(block_rows, n - block * block_rows);
      summary.flagged += result.flagged;
      summary.outside += result.outside;
      summary.clamped += result.clamped;
      add_unseen(result.unseen, summary.unseen);
    }
    CREDENCE_RETURN_IF_ERROR(read_status);
    rows_before += n;
    got = next_got;
    current = 1 - current;
    table = &next;
  }
  CREDENCE_RETURN_IF_ERROR(output->commit());
  for (const UnseenCategories& u : summary.unseen) log_unseen(input_path, u);
  return summary;
}

}  // namespace credence
