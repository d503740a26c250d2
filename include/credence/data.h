// data: from a CSV file to a float32 design matrix, labels, a split and minibatches.
//
// The module reads a table (RFC 4180 CSV, header row required), decides each
// column's role and type (Schema), turns the target into class indices, splits the
// rows (stratified, seeded), fits a Preprocessing on the training rows only
// (standardise numeric columns, one-hot encode categorical ones) and applies it to
// any table with the same columns, including new rows at predict time. Everything
// the preprocessing learned is one plain struct, so the run file can store it.
//
// Storage convention (shared with the net module): the design matrix is float32,
// Eigen column-major, shape (D, N): one data row is one contiguous column. Labels
// are int32 class indices 0..K-1.
//
// Threads: every function is pure on its arguments and safe to call from several
// threads on different objects. A BatchIterator belongs to one thread.
//
//   DataOptions options;
//   options.schema.target = "diagnosis";
//   Result<Dataset> data = load_dataset("cancer.csv", options);
//   if (!data.ok()) return data.status();
//   // data->x is (D, N), data->labels (N), data->split.train the training rows.
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <cstdio>
#include <memory>
#include <limits>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "credence/status.h"

namespace credence {

// ---------------------------------------------------------------------------
// Reading a table
// ---------------------------------------------------------------------------

/// Cell texts that mean "missing" by default (compared after trimming spaces).
inline const std::vector<std::string> kDefaultNaTokens = {"", "NA", "NaN", "null", "?"};

/// How CSV bytes are read.
struct ReadOptions {
  /// Field separator, one byte. Default ','.
  char delimiter = ',';
  /// Cell texts that mean "missing", compared exactly after trimming spaces and tabs
  /// around an unquoted cell. Default kDefaultNaTokens. An empty cell is missing only
  /// when "" is in the list.
  std::vector<std::string> na_tokens = kDefaultNaTokens;
  /// Columns kept as text even when every cell is a number (categorical overrides
  /// and the target). Default empty. Names not in the header are ignored here.
  std::vector<std::string> text_columns;
  /// When > 0, the physical line the first byte after the header stands on, for parsing
  /// a piece of a larger file behind a copy of its header (CsvChunkReader). Default 0.
  std::int64_t data_first_line = 0;
  /// Data larger than this many bytes, with no quote in it, is read by two threads when
  /// OpenMP allows two (not inside a parallel region). Default 1 MiB.
  std::size_t parallel_above_bytes = std::size_t{1} << 20;
};

/// One column as read: numbers, or text interned as sorted levels.
struct TableColumn {
  std::string name;                     // from the header row
  bool is_text = false;                 // true: codes/levels hold it; false: numbers do
  std::vector<double> numbers;          // (N) when !is_text; NaN where missing
  std::vector<std::int32_t> codes;      // (N) when is_text: index into levels, -1 if missing
  std::vector<std::string> levels;      // when is_text: distinct values, sorted bytewise
  std::vector<std::int64_t> level_counts;  // rows per level
  std::int64_t missing = 0;             // missing cells
  std::int64_t first_missing_row = -1;  // 0-based data row of the first missing cell; -1 none
  std::int64_t numeric_cells = 0;       // non-missing cells that are finite numbers
  std::int64_t first_text_row = -1;     // first non-missing cell that is not a number; -1 none
  std::string first_text;               // that cell's text
};

/// A table read from CSV. Rows are data rows (the header is not one), 0-based.
struct Table {
  std::string source;                  // file name used in messages
  std::vector<TableColumn> columns;    // in file order
  std::vector<std::int64_t> row_lines; // (N) physical 1-based line where each row starts

  std::int64_t rows() const { return static_cast<std::int64_t>(row_lines.size()); }
  /// Index of the column called `name`, or -1.
  int find_column(std::string_view name) const;
  /// "file:line:column" of a cell, column 1-based, for messages.
  /// REQUIRES: 0 <= row < rows(), 0 <= column < columns.size().
  std::string cell_location(std::int64_t row, int column) const;
  /// The header names, quoted and comma separated ("'a', 'b'"), for messages.
  std::string column_list() const;
  /// What to tell a user who named a column `name` that is not in the header: the
  /// closest header name by edit distance ("did you mean 'fault_14d'?") when one is
  /// close, else the header's names (of a long header its first six and last two, and a
  /// count), or a hint when the header reads as one column holding ';', a tab or '|'.
  std::string column_hint(std::string_view name) const;
};

/// Reads a whole CSV file (RFC 4180: quoted fields with delimiters, doubled quotes
/// and line breaks; LF or CRLF line ends; an optional UTF-8 byte-order mark). The
/// first record is the header. Blank lines are skipped. Returns kInvalidInput naming
/// file, line and column for an empty file, a header without data rows, a header that
/// looks like data, an empty or duplicate column name, a ragged row or a broken
/// quote; kIoError when the file cannot be read.
Result<Table> read_table(const std::string& path, const ReadOptions& options);

/// Same as read_table on bytes already in memory; `source` names them in messages.
Result<Table> parse_table(std::string_view bytes, const std::string& source,
                          const ReadOptions& options);

/// Reads a CSV file piece by piece: each next() parses the following records (about
/// `chunk_bytes` of them, always whole records, quoted line breaks included) behind the
/// file's header, so memory stays bounded whatever the file's length. Every piece is a
/// Table with the header's columns; its row_lines and messages give the file's own lines.
/// Typing is per piece: a numeric column may come out as text in a piece where a cell is
/// not a number, which transform_rows then reports with its line.
///
///   Result<CsvChunkReader> reader = CsvChunkReader::open("big.csv", read);
///   Table piece;
///   for (bool got = true;;) { CREDENCE_RETURN_IF_ERROR(reader->next(piece, got)); if (!got) break; ... }
class CsvChunkReader {
 public:
  /// Opens `path` and reads its header (errors as read_table: a missing file, an empty
  /// file, a bad header). REQUIRES: chunk_bytes >= 1.
  static Result<CsvChunkReader> open(const std::string& path, const ReadOptions& options,
                                     std::int64_t chunk_bytes = std::int64_t{16} << 20);
  /// The next piece into `table`; `got` false (and `table` untouched) at the end.
  Status next(Table& table, bool& got);
  /// Data rows returned so far.
  std::int64_t rows_read() const { return rows_read_; }

 private:
  CsvChunkReader() = default;
  Status fill();  // reads more bytes into buffer_ (sets eof_)

  std::string path_;
  ReadOptions options_;
  std::int64_t chunk_bytes_ = 0;
  std::shared_ptr<std::FILE> file_;
  std::string header_;          // the header record's bytes, line end included
  std::int64_t header_lines_ = 0;
  std::string buffer_;          // bytes read but not yet returned
  std::int64_t next_line_ = 0;  // physical line of buffer_'s first byte
  bool eof_ = false;
  std::int64_t rows_read_ = 0;
};

// ---------------------------------------------------------------------------
// Schema: roles, types, classes
// ---------------------------------------------------------------------------

enum class ColumnRole { kFeature, kTarget, kId, kDropped };
enum class ColumnType { kNumeric, kCategorical };
/// What to do with missing values in feature columns (the target may never be missing).
enum class ImputeMethod {
  kNone,    // refuse, listing each column's count and first row
  kMedian,  // numeric: the training rows' median; categorical: the level "(missing)"
};

/// "feature", "target", "id", "dropped" / "numeric", "categorical" / "none", "median".
std::string_view role_name(ColumnRole role);
std::string_view type_name(ColumnType type);
std::string_view impute_name(ImputeMethod method);

/// The level a missing categorical cell becomes under ImputeMethod::kMedian.
inline constexpr std::string_view kMissingLevel = "(missing)";

/// How columns are read into roles and types.
struct SchemaOptions {
  /// Name of the class column. Required; no default.
  std::string target;
  /// Two-class targets: the class that decisions, curves and intervals are about (the
  /// event a risk score predicts). Empty (default): the class that sorts second.
  std::string positive_class;
  /// Columns treated as categorical even when every value is a number. Default none.
  std::vector<std::string> categorical;
  /// Columns ignored entirely. Default none.
  std::vector<std::string> drop;
  /// Identifier columns: not features, carried through to predictions. Default none.
  std::vector<std::string> id;
  /// Missing values in features: refuse (default) or impute.
  ImputeMethod impute = ImputeMethod::kNone;
  /// A categorical feature with more distinct values than this is refused as an
  /// identifier or free text. Default 1000.
  std::int64_t max_levels = 1000;
  /// ... and so is one whose distinct values reach this fraction of its non-missing
  /// cells, when it has at least 20 of them. Default 0.9.
  double max_distinct_fraction = 0.9;
  /// A target with more classes than this is refused (it is probably a measurement,
  /// not a class). Default 100.
  std::int64_t max_classes = 100;
};

struct ColumnSchema {
  std::string name;
  int index = 0;                        // 0-based position in the file
  ColumnRole role = ColumnRole::kFeature;
  ColumnType type = ColumnType::kNumeric;
  std::int64_t missing = 0;             // missing cells
  std::int64_t first_missing_row = -1;  // 0-based data row, -1 none
  std::int64_t levels = 0;              // distinct non-missing values (categorical only)
};

/// How the tool reads a table.
struct Schema {
  std::vector<ColumnSchema> columns;       // one per table column, in file order
  int target_index = -1;                   // index into columns
  /// Class names, sorted numerically when every name is a number, otherwise
  /// bytewise (lexicographic in UTF-8). Class k is class_names[k].
  std::vector<std::string> class_names;
  bool classes_numeric = false;            // which of the two orders was used
  std::vector<std::int64_t> class_counts;  // (K) rows per class
  std::vector<std::int32_t> labels;        // (N) class index of every row
  ImputeMethod impute = ImputeMethod::kNone;  // SchemaOptions::impute, for the preprocessing

  int num_classes() const { return static_cast<int>(class_names.size()); }
};

/// Decides roles and types. A column is numeric when every non-missing cell is a
/// number, otherwise categorical; a column whose cells are mostly numbers with a few
/// that are not is refused naming the first bad cell (it is almost always a typo;
/// --categorical accepts it). Refuses, naming the column: an unknown target or
/// override name, a missing target value, a single class, more than max_classes
/// classes, an all-missing feature, an identifier-like or free-text feature, and
/// (under ImputeMethod::kNone) any missing feature value, listing every such column.
Result<Schema> infer_schema(const Table& table, const SchemaOptions& options);

// ---------------------------------------------------------------------------
// Split
// ---------------------------------------------------------------------------

struct SplitOptions {
  /// Fraction of each class held out for the test split. Default 0.2; 0 = none.
  double test_fraction = 0.2;
  /// Fraction of each class held out for validation. Default 0.1; 0 = none.
  double val_fraction = 0.1;
  /// Seed of the shuffle. Same seed, same labels: same split, on every platform.
  std::uint64_t seed = 1;
};

/// Row indices (0-based data rows, ascending) of each part.
struct Split {
  std::vector<std::int64_t> train;
  std::vector<std::int64_t> validation;
  std::vector<std::int64_t> test;
};

/// Stratified split: each class's rows are shuffled and cut so that every part holds
/// each class within one row of its proportion, and the part sizes are the rounded
/// fractions of N (largest remainders). Returns kInvalidInput for fractions outside
/// [0, 1), with a sum of 1 or more, or leaving no training row.
/// REQUIRES: every label in [0, num_classes).
Result<Split> stratified_split(std::span<const std::int32_t> labels, int num_classes,
                               const SplitOptions& options);

/// After a split of `table`: for every level of a categorical feature (and, under
/// ImputeMethod::kMedian, a missing cell, which becomes a level) that no training row
/// holds, moves the lowest-numbered held-out row that has it (validation first, then
/// test) into the training rows, so that a level which only the split's chance kept out
/// of training is never reported as the user's error. Part sizes then differ from the
/// fractions by the rows moved; with --unseen error, a level present only in another
/// file is still refused at predict time. Returns the number of rows moved and logs one
/// line naming them. REQUIRES: schema from infer_schema(table, ...).
std::int64_t cover_levels_in_train(Split& split, const Table& table, const Schema& schema);

/// A class with fewer rows than this is too small to trust (ours: "a handful").
inline constexpr std::int64_t kFewClassRows = 5;
/// Warns through credence's log, once per process for each: a class with fewer than
/// kFewClassRows rows, and a non-empty split part (training, validation, test) holding
/// no row of some class; each message names the counts. `source` names the table.
void warn_small_data(const Schema& schema, const Split& split, std::string_view source);

// ---------------------------------------------------------------------------
// Preprocessing
// ---------------------------------------------------------------------------

/// A category at transform time that the training rows never showed.
enum class UnseenPolicy {
  kError,   // refuse, naming column, value and line (default)
  kIgnore,  // encode as all zeros and log one warning per column
};
std::string_view unseen_name(UnseenPolicy policy);

struct PreprocessOptions {
  /// Unseen categories at transform time. Default kError.
  UnseenPolicy unseen = UnseenPolicy::kError;
};

/// How one input column becomes rows [offset, offset + width) of the design matrix.
struct FeatureEncoding {
  std::string name;
  ColumnType type = ColumnType::kNumeric;
  std::int64_t offset = 0;  // first design-matrix row
  std::int64_t width = 1;   // 1 for numeric; categories.size() for categorical
  /// Numeric: z = (x - mean) / scale, with mean and the population standard
  /// deviation (ddof = 0, as numpy.std's default) of the training rows after
  /// imputation. A constant column gets scale 1 (it is then all zeros).
  double mean = 0.0;
  double scale = 1.0;
  bool constant = false;
  /// Numeric: the value a missing cell takes (training median); NaN when not imputing.
  double impute_value = std::numeric_limits<double>::quiet_NaN();
  /// Categorical: one-hot levels, sorted bytewise, as seen in the training rows (plus
  /// kMissingLevel when imputing).
  std::vector<std::string> categories;

  bool operator==(const FeatureEncoding& other) const;
};

/// One column of the table the preprocessing was fitted on.
struct ColumnSpec {
  std::string name;
  ColumnRole role = ColumnRole::kFeature;
  ColumnType type = ColumnType::kNumeric;
  bool operator==(const ColumnSpec&) const = default;
};

/// Everything fitted on the training rows: enough to encode new rows the same way.
/// A plain value, written to and read back from the run file field by field.
struct Preprocessing {
  std::vector<ColumnSpec> columns;       // every column of the fitted table, in order
  std::vector<FeatureEncoding> features; // the feature columns, in design-matrix order
  std::string target;                    // target column name
  std::vector<std::string> class_names;  // sorted as in Schema
  bool classes_numeric = false;
  ImputeMethod impute = ImputeMethod::kNone;
  UnseenPolicy unseen = UnseenPolicy::kError;
  std::int64_t input_width = 0;          // D: sum of the features' widths

  bool operator==(const Preprocessing& other) const = default;
};

/// Fits the preprocessing on `train_rows` of `table`.
/// Returns kInvalidInput when a numeric feature has no value in the training rows.
/// Logs a warning per constant numeric column (kept, centred to zero).
/// REQUIRES: schema came from infer_schema(table, ...); train_rows not empty.
Result<Preprocessing> fit_preprocessing(const Table& table, const Schema& schema,
                                        std::span<const std::int64_t> train_rows,
                                        const PreprocessOptions& options);

/// Categories of one column that transform_rows met but the training rows never showed
/// (UnseenPolicy::kIgnore encodes them as all zeros).
struct UnseenCategories {
  std::string column;
  std::int64_t count = 0;
  std::string first_at;  // "file:line:column" of the first one
};
/// Logs one warning for `unseen`, found in the file named `source`.
void log_unseen(std::string_view source, const UnseenCategories& unseen);

/// Encodes `rows` of `table` into a (D, rows.size()) matrix. Columns are found by
/// name, so `table` may be a new file: extra columns are ignored, and a missing
/// feature column is an error naming it. Errors (kInvalidInput, naming file, line,
/// column): a missing value when the preprocessing does not impute, a non-number in
/// a numeric column, an unseen category under UnseenPolicy::kError.
/// Unseen categories under kIgnore are logged once per column, or, when `unseen` is
/// given, appended to it instead (a caller encoding a file in pieces reports them once).
/// Returns the matrix on success.
Result<Eigen::MatrixXf> transform_rows(const Preprocessing& preprocessing, const Table& table,
                                       std::span<const std::int64_t> rows,
                                       std::vector<UnseenCategories>* unseen = nullptr);
/// transform_rows over every row of `table`.
Result<Eigen::MatrixXf> transform_table(const Preprocessing& preprocessing, const Table& table);

/// The columns a new table must be read with as text (categorical features and the
/// target) for transform_rows to see them as the fitted table did.
std::vector<std::string> text_columns_of(const Preprocessing& preprocessing);

/// Class indices of every row of `table`'s target column. Errors name the line of a
/// missing target or of a class name the preprocessing does not know.
Result<std::vector<std::int32_t>> encode_labels(const Preprocessing& preprocessing,
                                                const Table& table);

// ---------------------------------------------------------------------------
// Minibatches
// ---------------------------------------------------------------------------

struct BatchOptions {
  /// Nominal batch size B, in rows. Default 128. Must be >= 1.
  std::int64_t batch_rows = 128;
  /// The short last batch of an epoch: dropped (true), or returned with its own row
  /// count (false, default). Either way no batch ever claims B rows it does not have.
  bool drop_last = false;
};

/// What one call to BatchIterator::next produced.
struct BatchInfo {
  std::int64_t rows = 0;        // rows filled: B, or fewer for the last batch of an epoch
  std::int64_t epoch = 0;       // 0-based epoch this batch belongs to
  bool last_of_epoch = false;   // the next batch starts a new shuffle
};

/// Where a BatchIterator stands: the whole of its state besides its constructor
/// arguments. The next batch comes from epoch `epoch`'s order, starting at `cursor`.
struct BatchPosition {
  std::int64_t epoch = 0;   // 0-based epoch
  std::int64_t cursor = 0;  // rows of that epoch's order already handed out, 0..n
  bool operator==(const BatchPosition&) const = default;
};

/// Seeded minibatches without replacement. Epoch e's order is a fresh Fisher-Yates
/// shuffle of the row subset in its original (constructor) order, driven by SplitMix64
/// started from epoch_shuffle_state(seed, e) (src/data/shuffle.h spells the mix out), and
/// each epoch is cut into consecutive slices. So the position (epoch, cursor) is the
/// iterator's whole state: seek() to a saved position continues with the very same
/// batches. Construction and seek() allocate; next() never does.
///
///   BatchIterator batches(data->x, data->labels, data->split.train, {.batch_rows = 64}, 7);
///   Eigen::MatrixXf xb(D, 64);  std::vector<int32_t> yb(64);
///   BatchInfo info = batches.next(xb, yb);   // columns [0, info.rows) are valid
///   BatchPosition saved = batches.position();  // ... later, maybe in another process:
///   Status s = batches.seek(saved);            // the same batches follow
class BatchIterator {
 public:
  /// `x` (D, N) and `labels` (N) must outlive the iterator. `rows` selects the rows
  /// to draw from (copied). REQUIRES: rows not empty, every row < N,
  /// labels.size() == x.cols(), options.batch_rows >= 1, and with drop_last
  /// rows.size() >= batch_rows.
  BatchIterator(const Eigen::MatrixXf& x, std::span<const std::int32_t> labels,
                std::span<const std::int64_t> rows, const BatchOptions& options,
                std::uint64_t seed);

  /// Fills columns [0, rows) of `x_batch` (D, >= B) and `labels_batch` (>= B).
  /// REQUIRES: x_batch.rows() == D, x_batch.cols() >= B, labels_batch.size() >= B.
  BatchInfo next(Eigen::Ref<Eigen::MatrixXf> x_batch, std::span<std::int32_t> labels_batch);

  /// The position of the next batch (a position at the end of an epoch is valid:
  /// next() then starts the following epoch).
  BatchPosition position() const { return {epoch_, cursor_}; }
  /// Moves to `position`, rebuilding that epoch's order. Fails with kCorrupt, leaving
  /// the iterator where it was, unless epoch >= 0 and 0 <= cursor <= rows.size().
  Status seek(const BatchPosition& position);

  /// Batches per epoch (counting a short last batch unless it is dropped).
  std::int64_t batches_per_epoch() const;
  std::int64_t batch_rows() const { return options_.batch_rows; }

 private:
  void build_order(std::int64_t epoch);  // order_ = rows_ shuffled for `epoch`

  const float* x_;                       // (D, N), column-major
  std::int64_t d_;
  std::span<const std::int32_t> labels_;  // (N)
  std::vector<std::int64_t> rows_;        // the subset in its original order
  std::vector<std::int64_t> order_;       // this epoch's shuffle of rows_
  BatchOptions options_;
  std::uint64_t seed_;
  std::int64_t cursor_ = 0;               // next position in order_
  std::int64_t epoch_ = 0;
};

// ---------------------------------------------------------------------------
// Everything at once, and provenance
// ---------------------------------------------------------------------------

/// The settings of load_dataset, one struct per stage.
struct DataOptions {
  ReadOptions read;
  SchemaOptions schema;
  SplitOptions split;
  PreprocessOptions preprocess;
};

/// A table read, typed, split and encoded.
struct Dataset {
  Table table;
  Schema schema;
  Split split;
  Preprocessing preprocessing;      // fitted on split.train
  Eigen::MatrixXf x;                // (D, N): every row, encoded
  std::vector<std::int32_t> labels; // (N)
};

/// read_table + infer_schema + stratified_split + fit_preprocessing + transform_table.
/// The categorical overrides and the target are added to the read's text columns.
Result<Dataset> load_dataset(const std::string& path, const DataOptions& options);

/// SHA-256 of a file's bytes as 64 lower-case hex digits (FIPS 180-4), for the run
/// file's provenance. Returns kIoError when the file cannot be read.
Result<std::string> file_sha256_hex(const std::string& path);

/// SHA-256 of bytes in memory, 64 lower-case hex digits.
std::string sha256_hex(std::string_view bytes);

}  // namespace credence
