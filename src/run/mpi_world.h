// The MPI job a training run belongs to, when `credence train` runs under mpirun: rank,
// size, hosts, and the few point-to-point and collective calls the run needs. Only the
// thread that created the World calls into it (MPI_THREAD_FUNNELED).
#pragma once

#include <memory>
#include <string>
#include <vector>

#include "credence/status.h"

namespace credence::mpi {

/// Message tags of a training run.
inline constexpr int kTagData = 11;     // worker -> 0: chain messages
inline constexpr int kTagDone = 12;     // worker -> 0: how its chains ended
inline constexpr int kTagControl = 13;  // 0 -> worker: stop flag and checkpoint generation
inline constexpr int kTagFinal = 14;    // 0 -> worker: the run's final status

/// True when an MPI launcher started this process (Open MPI's mpirun sets
/// OMPI_COMM_WORLD_SIZE; PMIx-based launchers set PMIX_RANK).
bool launched_by_mpirun();

class World {
 public:
  /// MPI_Init_thread asking for MPI_THREAD_FUNNELED; kInternal when the library
  /// offers less.
  static Result<std::unique_ptr<World>> init();
  ~World();  // MPI_Finalize
  World(const World&) = delete;
  World& operator=(const World&) = delete;

  int rank() const { return rank_; }
  int size() const { return size_; }
  int hosts() const { return hosts_; }  // distinct processor names
  const std::string& host() const { return host_; }
  /// "rank 1 on host-b".
  std::string who(int rank) const;

  void send(int to, int tag, const std::vector<char>& bytes) const;
  /// A message of any tag from any rank if one is waiting (non-blocking).
  bool poll(int& from, int& tag, std::vector<char>& bytes) const;
  /// Blocks for a message with `tag` from `from`.
  void receive(int from, int tag, std::vector<char>& bytes) const;
  /// Every rank ends with root's bytes.
  void broadcast(std::vector<char>& bytes, int root) const;
  /// Collective: ok when every rank's status is ok; otherwise every rank gets the
  /// lowest failing rank's status, its message prefixed with who(rank).
  Status agree(const Status& mine) const;
  void barrier() const;

 private:
  World() = default;
  int rank_ = 0;
  int size_ = 1;
  int hosts_ = 1;
  std::string host_;
  std::vector<std::string> host_of_;  // (size) processor name of each rank
};

}  // namespace credence::mpi
