// Thin helpers over the HDF5 C++ API (see h5_util.h).
#include "ensemble/h5_util.h"

#include <algorithm>
#include <cstring>
#include <mutex>

namespace credence::h5 {

void silence_errors() {
  static std::once_flag once;
  std::call_once(once, [] {
    H5::Exception::dontPrint();
    H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
  });
}

Status guard(const std::string& context, StatusCode code, const std::function<Status()>& body,
             std::string_view what_to_do) {
  silence_errors();
  const std::string advice = what_to_do.empty() ? "" : "; " + std::string(what_to_do);
  try {
    return body();
  } catch (const FileDamage& damage) {
    return Status(code, context + ": " + damage.getDetailMsg() + advice);
  } catch (const H5::Exception& error) {
    std::string detail = error.getDetailMsg();
    if (detail.empty()) detail = error.getFuncName();
    return Status(code, context + ": HDF5 reported '" + detail + "' in " + error.getFuncName() +
                            advice);
  } catch (const std::bad_alloc&) {
    return Status(code, context + ": out of memory (a size in the file is implausible)" + advice);
  } catch (const std::length_error&) {
    return Status(code, context + ": a size in the file is implausible" + advice);
  }
}

namespace {

H5::DataSpace scalar_space() { return H5::DataSpace(H5S_SCALAR); }

// Variable-length strings keep their text in the file's global heap, and HDF5 1.10 follows
// a damaged heap reference without a bounds check (a crash, not an error) and loops on a
// damaged collection. So run files hold fixed-width strings only, and a variable-length
// one is refused before HDF5 reads it.
void refuse_variable_length(hid_t type, const std::string& what) {
  if (H5Tis_variable_str(type) != 0) {
    throw FileDamage("refuse_variable_length", what +
                                                   " is a variable-length string; run files hold "
                                                   "fixed-width strings only");
  }
}

// Width of a fixed string type holding every one of `values`: HDF5 forbids width 0.
std::size_t widest(const std::vector<std::string>& values) {
  std::size_t bytes = 1;
  for (const std::string& value : values) bytes = std::max(bytes, value.size());
  return bytes;
}

// The file's width and character set (ASCII from h5py's bytes, UTF-8 from credence), so
// HDF5 converts only the padding.
H5::StrType memory_string_type(const H5::StrType& file_type) {
  H5::StrType type = fixed_string_type(file_type.getSize());
  type.setCset(file_type.getCset());
  return type;
}

std::vector<std::string> from_fixed(const std::vector<char>& buffer, std::size_t bytes,
                                    std::size_t count) {
  std::vector<std::string> values(count);
  for (std::size_t i = 0; i < count; ++i) {
    const char* start = buffer.data() + i * bytes;
    values[i].assign(start, strnlen(start, bytes));
  }
  return values;
}

H5::Attribute replace_attr(H5::H5Object& object, const char* name, const H5::DataType& type) {
  if (object.attrExists(name)) object.removeAttr(name);
  return object.createAttribute(name, type, scalar_space());
}

}  // namespace

void write_attr(H5::H5Object& object, const char* name, std::int64_t value) {
  replace_attr(object, name, H5::PredType::STD_I64LE).write(H5::PredType::NATIVE_INT64, &value);
}

void write_attr(H5::H5Object& object, const char* name, double value) {
  replace_attr(object, name, H5::PredType::IEEE_F64LE).write(H5::PredType::NATIVE_DOUBLE, &value);
}

void write_attr(H5::H5Object& object, const char* name, const std::string& value) {
  const std::size_t bytes = std::max<std::size_t>(1, value.size());
  std::vector<char> buffer(bytes, '\0');
  std::memcpy(buffer.data(), value.data(), value.size());
  H5::StrType type = fixed_string_type(bytes);
  replace_attr(object, name, type).write(type, buffer.data());
}

bool has_attr(const H5::H5Object& object, const char* name) { return object.attrExists(name); }

std::int64_t read_attr_i64(const H5::H5Object& object, const char* name) {
  std::int64_t value = 0;
  object.openAttribute(name).read(H5::PredType::NATIVE_INT64, &value);
  return value;
}

double read_attr_f64(const H5::H5Object& object, const char* name) {
  double value = 0;
  object.openAttribute(name).read(H5::PredType::NATIVE_DOUBLE, &value);
  return value;
}

std::string read_attr_string(const H5::H5Object& object, const char* name) {
  return read_string(object.openAttribute(name), name);
}

std::string read_string(const H5::Attribute& attr, const std::string& name) {
  if (attr.getTypeClass() != H5T_STRING)
    throw FileDamage("read_attr_string", "attribute '" + name + "' is not a string");
  const H5::StrType file_type = attr.getStrType();
  refuse_variable_length(file_type.getId(), "attribute '" + name + "'");
  const std::size_t bytes = file_type.getSize();
  const auto count = static_cast<std::size_t>(attr.getSpace().getSimpleExtentNpoints());
  if (count != 1)
    throw FileDamage("read_attr_string", "attribute '" + name + "' is not one string");
  std::vector<char> buffer(bytes, '\0');
  attr.read(memory_string_type(file_type), buffer.data());
  return from_fixed(buffer, bytes, 1)[0];
}

H5::Group create_ordered_group(H5::Group& parent, const char* name) {
  hid_t gcpl = H5Pcreate(H5P_GROUP_CREATE);
  H5Pset_attr_creation_order(gcpl, H5P_CRT_ORDER_TRACKED | H5P_CRT_ORDER_INDEXED);
  hid_t id = H5Gcreate2(parent.getId(), name, H5P_DEFAULT, gcpl, H5P_DEFAULT);
  H5Pclose(gcpl);
  if (id < 0)
    throw H5::GroupIException("create_ordered_group", std::string("cannot create group ") + name);
  return adopt<H5::Group>(id);
}

H5::DataSet create_fixed(H5::Group& group, const char* name, const H5::DataType& type,
                         std::int64_t rows, std::int64_t cols) {
  hsize_t dims[2] = {static_cast<hsize_t>(rows), static_cast<hsize_t>(cols)};
  H5::DataSpace space(cols >= 0 ? 2 : 1, dims);
  H5::DSetCreatPropList plist;
  plist.setAllocTime(H5D_ALLOC_TIME_EARLY);  // no file-space allocation during SWMR
  return group.createDataSet(name, type, space, plist);
}

void write_strings(H5::Group& group, const char* name, const std::vector<std::string>& values) {
  const std::size_t bytes = widest(values);
  H5::DataSet set = create_fixed(group, name, fixed_string_type(bytes),
                                 static_cast<std::int64_t>(values.size()));
  if (!values.empty()) write_fixed_strings(set, bytes, values);
}

std::vector<std::string> read_strings(const H5::Group& group, const char* name) {
  H5::DataSet set = group.openDataSet(name);
  if (set.getTypeClass() != H5T_STRING)
    throw FileDamage("read_strings", std::string("dataset '") + name + "' does not hold strings");
  return read_fixed_strings(set);
}

H5::StrType fixed_string_type(std::size_t bytes) {
  H5::StrType type(H5::PredType::C_S1, bytes);
  type.setStrpad(H5T_STR_NULLPAD);
  type.setCset(H5T_CSET_UTF8);
  return type;
}

void write_fixed_strings(H5::DataSet& set, std::size_t bytes,
                         const std::vector<std::string>& values) {
  std::vector<char> buffer(values.size() * bytes, '\0');
  for (std::size_t i = 0; i < values.size(); ++i) {
    std::memcpy(buffer.data() + i * bytes, values[i].data(), std::min(bytes, values[i].size()));
  }
  set.write(buffer.data(), fixed_string_type(bytes));
}

std::vector<std::string> read_fixed_strings(const H5::DataSet& set) {
  const H5::StrType file_type = set.getStrType();
  refuse_variable_length(file_type.getId(), "dataset '" + set.getObjName() + "'");
  const std::size_t bytes = file_type.getSize();
  const auto count = static_cast<std::size_t>(set.getSpace().getSimpleExtentNpoints());
  std::vector<char> buffer(count * bytes, '\0');
  if (count > 0) set.read(buffer.data(), memory_string_type(file_type));
  return from_fixed(buffer, bytes, count);
}

H5::DataSet create_table(H5::Group& group, const char* name, const H5::DataType& type,
                         std::int64_t cols, std::int64_t chunk_rows) {
  const int rank = cols >= 0 ? 2 : 1;
  // A zero-width table still needs a chunk of width 1, which a fixed width 0 forbids.
  hsize_t dims[2] = {0, static_cast<hsize_t>(std::max<std::int64_t>(cols, 0))};
  // Both dimensions unlimited, so HDF5 indexes the chunks with a version-2 B-tree: its
  // nodes (2048 bytes) never cross a 4 KiB page of the paged file, while an extensible
  // array's data blocks outgrow a page after about 8,000 chunks and kill -9 could tear
  // one (tests/ensemble/chunk_index_test.cc). 1-D tables keep the extensible array; at
  // 4096 rows per chunk they reach that size after 33 million rows.
  hsize_t max_dims[2] = {H5S_UNLIMITED, H5S_UNLIMITED};
  hsize_t chunk[2] = {static_cast<hsize_t>(std::max<std::int64_t>(1, chunk_rows)),
                      std::max<hsize_t>(1, dims[1])};
  H5::DataSpace space(rank, dims, max_dims);
  H5::DSetCreatPropList plist;
  plist.setChunk(rank, chunk);
  return group.createDataSet(name, type, space, plist);
}

namespace {

// Our tables have one or two dimensions; a damaged rank would overrun the dims array.
H5::DataSpace table_space(const H5::DataSet& set) {
  H5::DataSpace space = set.getSpace();
  const int rank = space.getSimpleExtentNdims();
  if (rank < 1 || rank > 2) {
    throw FileDamage("table_space", "dataset " + set.getObjName() + " has " +
                                        std::to_string(rank) + " dimensions; tables have 1 or 2");
  }
  return space;
}

}  // namespace

std::int64_t table_rows(const H5::DataSet& set) {
  hsize_t dims[2] = {0, 0};
  table_space(set).getSimpleExtentDims(dims);
  return static_cast<std::int64_t>(dims[0]);
}

std::int64_t table_cols(const H5::DataSet& set) {
  H5::DataSpace space = table_space(set);
  if (space.getSimpleExtentNdims() < 2) return 1;
  hsize_t dims[2] = {0, 0};
  space.getSimpleExtentDims(dims);
  return static_cast<std::int64_t>(dims[1]);
}

void set_table_rows(H5::DataSet& set, std::int64_t rows) {
  hsize_t dims[2] = {0, 0};
  set.getSpace().getSimpleExtentDims(dims);
  dims[0] = static_cast<hsize_t>(rows);
  set.extend(dims);
}

namespace {

// File and memory selections of rows [first, first + rows); false when empty.
bool select_rows(const H5::DataSet& set, std::int64_t first, std::int64_t rows,
                 H5::DataSpace& file_space, H5::DataSpace& mem_space) {
  file_space = table_space(set);
  const int rank = file_space.getSimpleExtentNdims();
  hsize_t dims[2] = {0, 1};
  file_space.getSimpleExtentDims(dims);
  if (rows <= 0 || (rank == 2 && dims[1] == 0)) return false;
  hsize_t start[2] = {static_cast<hsize_t>(first), 0};
  hsize_t count[2] = {static_cast<hsize_t>(rows), rank == 2 ? dims[1] : 1};
  file_space.selectHyperslab(H5S_SELECT_SET, count, start);
  mem_space = H5::DataSpace(rank, count);
  return true;
}

}  // namespace

void write_rows(H5::DataSet& set, std::int64_t first, std::int64_t rows, const void* data,
                const H5::DataType& mem_type) {
  H5::DataSpace file_space, mem_space;
  if (select_rows(set, first, rows, file_space, mem_space)) {
    set.write(data, mem_type, mem_space, file_space);
  }
}

void read_rows(const H5::DataSet& set, std::int64_t first, std::int64_t rows, std::int64_t cols,
               void* data, const H5::DataType& mem_type) {
  // The file's shape decides how much HDF5 writes into `data`: it must be the buffer's.
  H5::DataSpace space = table_space(set);
  const int rank = space.getSimpleExtentNdims();
  if ((cols < 0) != (rank == 1) || (cols >= 0 && table_cols(set) != cols)) {
    throw FileDamage("read_rows", "dataset " + set.getObjName() + " has " +
                                      (rank == 1 ? std::string("one column")
                                                 : std::to_string(table_cols(set)) + " columns") +
                                      " where " +
                                      (cols < 0 ? std::string("one column")
                                                : std::to_string(cols) + " columns") +
                                      " are expected");
  }
  H5::DataSpace file_space, mem_space;
  if (select_rows(set, first, rows, file_space, mem_space)) {
    set.read(data, mem_type, mem_space, file_space);
  }
}

}  // namespace credence::h5
