// run_train: a new run prepared and created, or a stopped one reopened, then the
// chains run into it (chain_pipeline.h); under mpirun the MPI transport takes over.
#include "credence/train.h"

#include "run/chain_pipeline.h"
#include "run/prepared_run.h"
#include "run/resume.h"
#include "util/log.h"
#ifdef CREDENCE_HAVE_MPI
#include "run/mpi_train.h"
#include "run/mpi_world.h"
#endif

#ifdef CREDENCE_HAVE_BLAS
extern "C" void openblas_set_num_threads(int);
#endif

namespace credence {

Status run_train(const TrainRequest& request) {
#ifdef CREDENCE_HAVE_BLAS
  // Chains run in parallel with OpenMP; BLAS threads inside each chain would fight
  // them for the cores (DESIGN.md section 6).
  openblas_set_num_threads(1);
#endif
#ifdef CREDENCE_HAVE_MPI
  if (mpi::launched_by_mpirun()) return run_train_under_mpi(request);
#endif
  std::unique_ptr<RunWriter> writer;
  std::vector<ChainCheckpoint> resume;
  PreparedRun prepared;
  if (!request.resume_path.empty()) {
    // Resuming a finished run does nothing and succeeds, so a script or scheduler that
    // resumes after every interruption needs no special case for a kill that landed
    // after the last commit. (Under MPI, where only rank 0 may see the file, it is still
    // refused by RunWriter::reopen.)
    if (Result<std::unique_ptr<RunReader>> done = RunReader::open(request.resume_path);
        done.ok() && (*done)->summary().status == RunStatus::kComplete) {
      log().info("{} is already complete ({} samples kept); nothing to resume",
                 request.resume_path, (*done)->summary().samples);
      return Status::ok_status();
    }
    std::vector<ChainState> states;
    Result<std::unique_ptr<RunWriter>> reopened = RunWriter::reopen(request.resume_path, states);
    if (!reopened.ok()) return reopened.status();
    writer = std::move(*reopened);
    Result<PreparedRun> p = prepare_resumed_run(writer->header(), request.data_path);
    if (!p.ok()) return p.status();
    prepared = std::move(*p);
    for (const ChainState& state : states) resume.push_back(checkpoint_of(state));
    log().info("resuming {} chains from {}", states.size(), request.resume_path);
  } else {
    Result<PreparedRun> p = prepare_new_run(request);
    if (!p.ok()) return p.status();
    prepared = std::move(*p);
    Result<std::unique_ptr<RunWriter>> created =
        RunWriter::create(request.out_path, prepared.header, request.force);
    if (!created.ok()) return created.status();
    writer = std::move(*created);
    log().info("training {} chains of {} ({} parameters, {} training rows) into {}",
               prepared.settings.chains.chains, method_name(prepared.settings.sampler.method),
               prepared.layout.num_params, prepared.rows.x.cols(), request.out_path);
  }
  const std::string& run_path =
      request.resume_path.empty() ? request.out_path : request.resume_path;
  Status status = run_chains_into(prepared, *writer, run_path, std::move(resume), request.hooks);
  writer.reset();  // closed, so that the verdict can read the file
  if (status.ok() && request.verdict != nullptr) {
    *request.verdict = judge_run_file(run_path, prepared.probe.labels);
  }
  return status;
}

}  // namespace credence
