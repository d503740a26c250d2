// Thin helpers over the HDF5 C++ API: typed attributes, fixed arrays, extendable tables.
//
// Every helper may throw H5::Exception; the public entry points of src/ensemble catch
// it (see guard()) and turn it into a Status. HDF5 headers stay inside src/ensemble.
#pragma once

#include <H5Cpp.h>

#include <cstdint>
#include <functional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "credence/status.h"

namespace credence::h5 {

/// Turns off HDF5's automatic error printing (C and C++ APIs); idempotent.
void silence_errors();

/// Damage credence finds itself in a file HDF5 read without complaint (a count out of
/// range, an unknown name, a variable-length string). guard() reports it in these words,
/// not as an error HDF5 reported. `where` names the reading function, for debugging.
class FileDamage : public H5::Exception {
 public:
  FileDamage(const std::string& where, const std::string& what) : H5::Exception(where, what) {}
};

/// Runs `body`, turning an H5::Exception into kCorrupt (reading) or kIoError
/// (writing) with `context` and the HDF5 function that failed (a FileDamage: with
/// credence's finding in its own words), then `what_to_do` when
/// given (an error caught from HDF5 says what broke, not what to do about it). A Status
/// that `body` returns passes through unchanged.
Status guard(const std::string& context, StatusCode code, const std::function<Status()>& body,
             std::string_view what_to_do = {});

/// File and memory types of the element types we store.
template <typename T>
struct Type;
template <>
struct Type<std::int8_t> {
  static const H5::PredType& file() { return H5::PredType::STD_I8LE; }
  static const H5::PredType& mem() { return H5::PredType::NATIVE_INT8; }
};
template <>
struct Type<std::int32_t> {
  static const H5::PredType& file() { return H5::PredType::STD_I32LE; }
  static const H5::PredType& mem() { return H5::PredType::NATIVE_INT32; }
};
template <>
struct Type<std::int64_t> {
  static const H5::PredType& file() { return H5::PredType::STD_I64LE; }
  static const H5::PredType& mem() { return H5::PredType::NATIVE_INT64; }
};
template <>
struct Type<std::uint64_t> {
  static const H5::PredType& file() { return H5::PredType::STD_U64LE; }
  static const H5::PredType& mem() { return H5::PredType::NATIVE_UINT64; }
};
template <>
struct Type<float> {
  static const H5::PredType& file() { return H5::PredType::IEEE_F32LE; }
  static const H5::PredType& mem() { return H5::PredType::NATIVE_FLOAT; }
};
template <>
struct Type<double> {
  static const H5::PredType& file() { return H5::PredType::IEEE_F64LE; }
  static const H5::PredType& mem() { return H5::PredType::NATIVE_DOUBLE; }
};

// Attributes (scalar).
void write_attr(H5::H5Object& object, const char* name, std::int64_t value);
void write_attr(H5::H5Object& object, const char* name, double value);
void write_attr(H5::H5Object& object, const char* name, const std::string& value);
bool has_attr(const H5::H5Object& object, const char* name);
std::int64_t read_attr_i64(const H5::H5Object& object, const char* name);
double read_attr_f64(const H5::H5Object& object, const char* name);
/// A fixed-width string attribute's text; throws for a variable-length one (see h5_util.cc).
std::string read_attr_string(const H5::H5Object& object, const char* name);
std::string read_string(const H5::Attribute& attr, const std::string& name);

/// Wraps a C API id in its C++ object, which then owns the only reference (some
/// C++ constructors from an id add a reference of their own).
template <typename T>
T adopt(hid_t id) {
  T object(id);
  if (H5Iget_ref(id) > 1) H5Idec_ref(id);
  return object;
}

/// A group whose attributes remember their creation order.
H5::Group create_ordered_group(H5::Group& parent, const char* name);

// Fixed-size datasets, written once before SWMR starts (space allocated early).
/// Creates (rows), or (rows, cols) when cols >= 0, contiguous, allocated at once.
H5::DataSet create_fixed(H5::Group& group, const char* name, const H5::DataType& type,
                         std::int64_t rows, std::int64_t cols = -1);
template <typename T>
void write_array(H5::Group& group, const char* name, std::span<const T> values) {
  H5::DataSet set =
      create_fixed(group, name, Type<T>::file(), static_cast<std::int64_t>(values.size()));
  if (!values.empty()) set.write(values.data(), Type<T>::mem());
}
template <typename T>
std::vector<T> read_array(const H5::Group& group, const char* name) {
  H5::DataSet set = group.openDataSet(name);
  hsize_t count = static_cast<hsize_t>(set.getSpace().getSimpleExtentNpoints());
  std::vector<T> values(count);
  if (count > 0) set.read(values.data(), Type<T>::mem());
  return values;
}
/// Strings of any length, stored fixed-width (the longest one's width), null-padded UTF-8.
void write_strings(H5::Group& group, const char* name, const std::vector<std::string>& values);
std::vector<std::string> read_strings(const H5::Group& group, const char* name);

/// Fixed-width, null-padded ASCII/UTF-8 strings: writable during SWMR.
H5::StrType fixed_string_type(std::size_t bytes);
void write_fixed_strings(H5::DataSet& set, std::size_t bytes,
                         const std::vector<std::string>& values);
std::vector<std::string> read_fixed_strings(const H5::DataSet& set);

// Extendable tables: (rows) when cols < 0, else (rows, cols); rows grow.
H5::DataSet create_table(H5::Group& group, const char* name, const H5::DataType& type,
                         std::int64_t cols, std::int64_t chunk_rows);
/// Current extent's first dimension.
std::int64_t table_rows(const H5::DataSet& set);
/// Sets the first dimension to `rows` (grows or drops rows).
void set_table_rows(H5::DataSet& set, std::int64_t rows);
/// Writes rows [first, first + rows) from a row-major buffer; the extent must hold them.
void write_rows(H5::DataSet& set, std::int64_t first, std::int64_t rows, const void* data,
                const H5::DataType& mem_type);
/// Reads rows [first, first + rows) into a row-major buffer of `cols` values per row
/// (-1: a 1-D table). Throws FileDamage when the table has another shape, so a damaged
/// file can never make HDF5 write past the buffer.
void read_rows(const H5::DataSet& set, std::int64_t first, std::int64_t rows, std::int64_t cols,
               void* data, const H5::DataType& mem_type);
/// Second dimension (1 for a 1-D set).
std::int64_t table_cols(const H5::DataSet& set);

}  // namespace credence::h5
