// The run header: format attributes, provenance, data split, model, settings, sampling.
#include <string>
#include <variant>

#include "ensemble/h5_util.h"
#include "ensemble/layout.h"
#include "ensemble/run_file.h"

namespace credence::run_file {
namespace {

using namespace credence::layout;

template <typename T>
void write_vec(H5::Group& group, const char* name, const std::vector<T>& values) {
  h5::write_array<T>(group, name, std::span<const T>(values));
}

void write_settings(H5::Group& group, const Settings& settings) {
  for (const auto& [name, value] : settings) {
    if (const auto* i = std::get_if<std::int64_t>(&value)) {
      h5::write_attr(group, name.c_str(), *i);
    } else if (const auto* d = std::get_if<double>(&value)) {
      h5::write_attr(group, name.c_str(), *d);
    } else {
      h5::write_attr(group, name.c_str(), std::get<std::string>(value));
    }
  }
}

Settings read_settings(const H5::Group& group) {
  Settings settings;
  const int count = group.getNumAttrs();
  for (int i = 0; i < count; ++i) {
    hid_t id = H5Aopen_by_idx(group.getId(), ".", H5_INDEX_CRT_ORDER, H5_ITER_INC,
                              static_cast<hsize_t>(i), H5P_DEFAULT, H5P_DEFAULT);
    if (id < 0) throw H5::AttributeIException("read_settings", "cannot open a setting");
    H5::Attribute attr = h5::adopt<H5::Attribute>(id);
    const std::string name = attr.getName();
    switch (attr.getTypeClass()) {
      case H5T_INTEGER: {
        std::int64_t value = 0;
        attr.read(H5::PredType::NATIVE_INT64, &value);
        settings.emplace_back(name, value);
        break;
      }
      case H5T_FLOAT: {
        double value = 0;
        attr.read(H5::PredType::NATIVE_DOUBLE, &value);
        settings.emplace_back(name, value);
        break;
      }
      case H5T_STRING:
        settings.emplace_back(name, h5::read_string(attr, name));
        break;
      default:
        throw h5::FileDamage("read_settings", "setting '" + name + "' has an unsupported type");
    }
  }
  return settings;
}

}  // namespace

Status validate_header(const RunHeader& header) {
  if (header.parameters <= 0) return Status::internal("run header: parameter count must be > 0");
  if (header.chains <= 0) return Status::internal("run header: chain count must be > 0");
  if (header.projections < 0 || header.layers < 0) {
    return Status::internal("run header: negative projection or layer count");
  }
  auto bad_name = [](const std::string& name) {
    return name.empty() || name.find('/') != std::string::npos || name == ".";
  };
  for (std::size_t i = 0; i < header.settings.size(); ++i) {
    const std::string& name = header.settings[i].first;
    if (bad_name(name)) return Status::internal("run header: bad setting name '" + name + "'");
    for (std::size_t j = 0; j < i; ++j) {
      if (header.settings[j].first == name) {
        return Status::internal("run header: setting '" + name + "' appears twice");
      }
    }
  }
  const NamedArrays& t = header.state_template;
  for (const auto& [name, values] : t.floats) {
    if (bad_name(name)) return Status::internal("run header: bad state name '" + name + "'");
  }
  for (const auto& [name, values] : t.doubles) {
    if (bad_name(name)) return Status::internal("run header: bad state name '" + name + "'");
  }
  for (const auto& [name, values] : t.words) {
    if (bad_name(name)) return Status::internal("run header: bad state name '" + name + "'");
  }
  return Status::ok_status();
}

void write_header(H5::H5File& file, const RunHeader& header) {
  H5::Group root = file.openGroup("/");
  h5::write_attr(root, kFormatAttr, std::string(kFormatName));
  h5::write_attr(root, kFormatVersionAttr, std::int64_t{kRunFormatVersion});

  H5::Group provenance = file.createGroup(kProvenance);
  h5::write_attr(provenance, kToolVersion, header.tool_version);
  h5::write_attr(provenance, kCommandLine, header.command_line);
  h5::write_attr(provenance, kCreatedUtc, header.created_utc);
  h5::write_attr(provenance, kMpiRanks, std::int64_t{header.mpi_ranks});
  h5::write_attr(provenance, kMpiHosts, std::int64_t{header.mpi_hosts});

  H5::Group data = file.createGroup(kData);
  h5::write_attr(data, kDataFile, header.data_file);
  h5::write_attr(data, kDataSha256, header.data_sha256);
  h5::write_attr(data, kDataRows, header.data_rows);
  write_vec(data, kTrainRows, header.train_rows);
  write_vec(data, kValRows, header.val_rows);
  write_vec(data, kTestRows, header.test_rows);

  H5::Group preprocessing = file.createGroup(kPreprocessing);
  write_preprocessing(preprocessing, header.preprocessing);

  H5::Group model = file.createGroup(kModel);
  h5::write_attr(model, kNetText, header.net_text);
  h5::write_attr(model, kParameters, header.parameters);

  H5::Group settings = h5::create_ordered_group(root, kSettings);
  write_settings(settings, header.settings);

  H5::Group sampling = file.createGroup(kSampling);
  h5::write_attr(sampling, kChains, std::int64_t{header.chains});
  h5::write_attr(sampling, kSamplesPerChain, header.samples_per_chain);
  h5::write_attr(sampling, kProjectionCount, std::int64_t{header.projections});
  h5::write_attr(sampling, kLayerCount, std::int64_t{header.layers});
  write_vec(sampling, kProbeRows, header.probe_rows);
  if (!header.probe_labels.empty()) write_vec(sampling, kProbeLabels, header.probe_labels);
}

namespace {

Status check_version(std::int64_t version, const std::string& path) {
  if (version == kRunFormatVersion) return Status::ok_status();
  const std::string what = version > kRunFormatVersion
                               ? "it was written by a newer credence; upgrade credence to read it"
                               : "it was written by an older credence; read it with that "
                                 "version or train the run again";
  return Status::corrupt("reading run file " + path + ": format version " +
                         std::to_string(version) + " found, this build reads version " +
                         std::to_string(kRunFormatVersion) + "; " + what);
}

}  // namespace

Status check_format(const H5::H5File& file, const std::string& path) {
  H5::Group root = file.openGroup("/");
  // The version first: an older credence's strings are of a kind this build does not read.
  if (h5::has_attr(root, kFormatAttr) && h5::has_attr(root, kFormatVersionAttr)) {
    CREDENCE_RETURN_IF_ERROR(check_version(h5::read_attr_i64(root, kFormatVersionAttr), path));
  }
  if (!h5::has_attr(root, kFormatAttr) || h5::read_attr_string(root, kFormatAttr) != kFormatName) {
    return Status::corrupt("reading run file " + path +
                           ": this HDF5 file is not a credence run file (no '" +
                           std::string(kFormatAttr) + "' attribute saying '" + kFormatName +
                           "'); give the file written by 'credence train'");
  }
  if (!h5::has_attr(root, kFormatVersionAttr)) {
    return Status::corrupt("reading run file " + path + ": the format version is missing");
  }
  return check_version(h5::read_attr_i64(root, kFormatVersionAttr), path);
}

RunHeader read_header(const H5::H5File& file) {
  RunHeader header;
  H5::Group provenance = file.openGroup(kProvenance);
  header.tool_version = h5::read_attr_string(provenance, kToolVersion);
  header.command_line = h5::read_attr_string(provenance, kCommandLine);
  header.created_utc = h5::read_attr_string(provenance, kCreatedUtc);
  if (h5::has_attr(provenance, kMpiRanks)) {
    header.mpi_ranks = static_cast<int>(h5::read_attr_i64(provenance, kMpiRanks));
  }
  if (h5::has_attr(provenance, kMpiHosts)) {
    header.mpi_hosts = static_cast<int>(h5::read_attr_i64(provenance, kMpiHosts));
  }

  H5::Group data = file.openGroup(kData);
  header.data_file = h5::read_attr_string(data, kDataFile);
  header.data_sha256 = h5::read_attr_string(data, kDataSha256);
  header.data_rows = h5::read_attr_i64(data, kDataRows);
  header.train_rows = h5::read_array<std::int64_t>(data, kTrainRows);
  header.val_rows = h5::read_array<std::int64_t>(data, kValRows);
  header.test_rows = h5::read_array<std::int64_t>(data, kTestRows);

  header.preprocessing = read_preprocessing(file.openGroup(kPreprocessing));

  H5::Group model = file.openGroup(kModel);
  header.net_text = h5::read_attr_string(model, kNetText);
  header.parameters = h5::read_attr_i64(model, kParameters);

  header.settings = read_settings(file.openGroup(kSettings));

  H5::Group sampling = file.openGroup(kSampling);
  header.chains = static_cast<int>(h5::read_attr_i64(sampling, kChains));
  header.samples_per_chain = h5::read_attr_i64(sampling, kSamplesPerChain);
  header.projections = static_cast<int>(h5::read_attr_i64(sampling, kProjectionCount));
  header.layers = static_cast<int>(h5::read_attr_i64(sampling, kLayerCount));
  header.probe_rows = h5::read_array<std::int64_t>(sampling, kProbeRows);
  if (sampling.nameExists(kProbeLabels)) {  // files of an earlier build lack them
    header.probe_labels = h5::read_array<std::int32_t>(sampling, kProbeLabels);
  }
  if (header.chains <= 0 || header.chains > 1000000 || header.parameters <= 0 ||
      header.projections < 0 || header.layers < 0) {
    throw h5::FileDamage("read_header", "implausible chain, parameter or summary counts");
  }

  // The state template: names and sizes of slot 0's state arrays.
  H5::Group state = file.openGroup(kCheckpoint).openGroup(slot_group(0)).openGroup(kState);
  auto template_of = [&state](const char* kind, auto& map) {
    H5::Group group = state.openGroup(kind);
    const hsize_t count = group.getNumObjs();
    for (hsize_t i = 0; i < count; ++i) {
      const std::string name = group.getObjnameByIdx(i);
      const std::int64_t size = h5::table_cols(group.openDataSet(name));
      map[name].assign(static_cast<std::size_t>(size), {});
    }
  };
  template_of(kFloats, header.state_template.floats);
  template_of(kDoubles, header.state_template.doubles);
  template_of(kWords, header.state_template.words);
  return header;
}

}  // namespace credence::run_file
