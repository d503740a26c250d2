// The run file's layout: the only place that spells group, dataset and attribute names.
//
// docs/run-file.md documents every name here, group by group; change both together
// and bump kRunFormatVersion (include/credence/ensemble.h) when a reader would break.
#pragma once

#include <array>
#include <cstdint>
#include <string>

namespace credence::layout {

// Root attributes: what the file is.
inline constexpr const char* kFormatAttr = "format";  // string
inline constexpr const char* kFormatName = "credence-run";
inline constexpr const char* kFormatVersionAttr = "format_version";  // int64

// /provenance: string attributes.
inline constexpr const char* kProvenance = "provenance";
inline constexpr const char* kToolVersion = "tool_version";
inline constexpr const char* kCommandLine = "command_line";
inline constexpr const char* kCreatedUtc = "created_utc";
// Added within format 1 (int64); readers treat absence as 1 rank on 1 host.
inline constexpr const char* kMpiRanks = "mpi_ranks";
inline constexpr const char* kMpiHosts = "mpi_hosts";

// /data: attributes file, sha256, rows; datasets of 0-based row indices.
inline constexpr const char* kData = "data";
inline constexpr const char* kDataFile = "file";
inline constexpr const char* kDataSha256 = "sha256";
inline constexpr const char* kDataRows = "rows";
inline constexpr const char* kTrainRows = "train_rows";
inline constexpr const char* kValRows = "val_rows";
inline constexpr const char* kTestRows = "test_rows";

// /preprocessing: attributes, class names, and two subgroups of parallel arrays.
inline constexpr const char* kPreprocessing = "preprocessing";
inline constexpr const char* kTarget = "target";
inline constexpr const char* kClassesNumeric = "classes_numeric";
inline constexpr const char* kImpute = "impute";
inline constexpr const char* kUnseen = "unseen";
inline constexpr const char* kInputWidth = "input_width";
inline constexpr const char* kClassNames = "class_names";
inline constexpr const char* kColumns = "columns";    // name, role, type
inline constexpr const char* kFeatures = "features";  // name, type, offset, ...
inline constexpr const char* kName = "name";
inline constexpr const char* kRole = "role";
inline constexpr const char* kType = "type";
inline constexpr const char* kOffset = "offset";
inline constexpr const char* kWidth = "width";
inline constexpr const char* kMean = "mean";
inline constexpr const char* kScale = "scale";
inline constexpr const char* kConstant = "constant";
inline constexpr const char* kImputeValue = "impute_value";
inline constexpr const char* kCategoryStart = "category_start";
inline constexpr const char* kCategoryCount = "category_count";
inline constexpr const char* kCategories = "categories";

// /model: attributes.
inline constexpr const char* kModel = "model";
inline constexpr const char* kNetText = "net_text";
inline constexpr const char* kParameters = "parameters";

// /settings: one typed attribute per setting, in creation order.
inline constexpr const char* kSettings = "settings";

// /sampling: attributes and the probe rows.
inline constexpr const char* kSampling = "sampling";
inline constexpr const char* kChains = "chains";
inline constexpr const char* kSamplesPerChain = "samples_per_chain";
inline constexpr const char* kProjectionCount = "projections";
inline constexpr const char* kLayerCount = "layers";
inline constexpr const char* kProbeRows = "probe_rows";
inline constexpr const char* kProbeLabels = "probe_labels";  // int32 (R); optional

// /samples: extendable, one row per kept sample.
inline constexpr const char* kSamples = "samples";
inline constexpr const char* kTheta = "theta";                  // float32 (S, P)
inline constexpr const char* kChain = "chain";                  // int32 (S)
inline constexpr const char* kStep = "step";                    // int64 (S)
inline constexpr const char* kIndex = "index";                  // int64 (S)
inline constexpr const char* kProbeLogLik = "probe_log_lik";    // float64 (S)
inline constexpr const char* kProbeProb = "probe_prob";         // float32 (S, R)
inline constexpr const char* kProjections = "projections";      // float32 (S, J)
inline constexpr const char* kLayerSqNorms = "layer_sq_norms";  // float32 (S, L)
// float64 (S, 2L): a learned prior's block precisions at each sample (weights, then biases,
// layer by layer); NaN rows when the prior was fixed. Absent from older files.
inline constexpr const char* kPriorPrecision = "prior_precision";
inline constexpr std::array<const char*, 8> kSampleTables = {
    kTheta, kChain, kStep, kIndex, kProbeLogLik, kProbeProb, kProjections, kLayerSqNorms};

// /traces/chain_<c>: extendable, one row per trace record of chain c.
inline constexpr const char* kTraces = "traces";
inline constexpr const char* kPotential = "potential";
inline constexpr const char* kAccuracy = "accuracy";
inline constexpr const char* kStepSize = "step_size";
inline constexpr const char* kSpeedRatio = "speed_ratio";
inline constexpr const char* kAcceptance = "acceptance";
inline constexpr std::array<const char*, 6> kTraceTables = {
    kStep, kPotential, kAccuracy, kStepSize, kSpeedRatio, kAcceptance};
inline std::string trace_group(int chain) { return "chain_" + std::to_string(chain); }

// /checkpoint/slot_0 and slot_1: committed counts and chain states.
inline constexpr const char* kCheckpoint = "checkpoint";
inline std::string slot_group(int slot) { return "slot_" + std::to_string(slot); }
inline constexpr const char* kCommittedSamples = "committed_samples";     // int64 (1)
inline constexpr const char* kCommittedPerChain = "committed_per_chain";  // int64 (C)
inline constexpr const char* kCommittedTraces = "committed_traces";       // int64 (C)
inline constexpr const char* kHasState = "has_state";                     // int8 (C)
inline constexpr const char* kNextStep = "next_step";                     // int64 (C)
inline constexpr const char* kKept = "kept";                              // int64 (C)
// Added within format 1: readers treat their absence (older files) as "not recorded".
inline constexpr const char* kSeconds = "seconds";                        // float64 (C)
inline constexpr const char* kGradientEvals = "gradient_evals";           // int64 (C)
inline constexpr const char* kStatus = "status";                          // string16 (C)
inline constexpr const char* kReason = "reason";                          // string512 (C)
// theta (C, P) float32 reuses kTheta; the NamedArrays under state/{floats,doubles,words}.
inline constexpr const char* kState = "state";
inline constexpr const char* kFloats = "floats";
inline constexpr const char* kDoubles = "doubles";
inline constexpr const char* kWords = "words";

// /run: what changes during SWMR, as small datasets.
inline constexpr const char* kRun = "run";
inline constexpr const char* kRunStatus = "status";        // string16 (1)
inline constexpr const char* kActiveSlot = "active_slot";  // int32 (1): -1, 0 or 1

// Fixed string widths (bytes, null padded) of the status and reason datasets.
inline constexpr std::size_t kStatusBytes = 16;
inline constexpr std::size_t kReasonBytes = 512;

// /calibration: written after training by `assess --save-temperature` (attributes).
inline constexpr const char* kCalibration = "calibration";
inline constexpr const char* kTemperature = "temperature";    // float64
inline constexpr const char* kFittedOn = "fitted_on";         // string
inline constexpr const char* kNllBefore = "nll_before";       // float64
inline constexpr const char* kNllAfter = "nll_after";         // float64
inline constexpr const char* kFittedUtc = "fitted_utc";       // string

// Chunking: about 512 KiB of theta per chunk; 4096 rows for narrow tables.
inline constexpr std::int64_t kThetaChunkBytes = 512 * 1024;
inline constexpr std::int64_t kNarrowChunkRows = 4096;

}  // namespace credence::layout
