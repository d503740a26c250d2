// Thin wrapper over the MPI calls a training run makes (see mpi_world.h).
#include "run/mpi_world.h"

#include <mpi.h>

#include <cstdlib>
#include <limits>
#include <set>

#include "run/mpi_wire.h"

namespace credence::mpi {
namespace {

// One message is at most this many bytes; larger buffers go as several.
constexpr std::size_t kPiece = std::size_t{1} << 30;

int count_of(std::size_t bytes) { return static_cast<int>(bytes); }

}  // namespace

bool launched_by_mpirun() {
  return std::getenv("OMPI_COMM_WORLD_SIZE") != nullptr || std::getenv("PMIX_RANK") != nullptr;
}

Result<std::unique_ptr<World>> World::init() {
  int provided = 0;
  if (MPI_Init_thread(nullptr, nullptr, MPI_THREAD_FUNNELED, &provided) != MPI_SUCCESS) {
    return Status::internal("MPI_Init_thread failed");
  }
  std::unique_ptr<World> world(new World());
  if (provided < MPI_THREAD_FUNNELED) {
    return Status::internal(
        "this MPI library does not support MPI_THREAD_FUNNELED (the chains run on threads "
        "while one thread talks to the other ranks); use Open MPI from Debian");
  }
  MPI_Comm_rank(MPI_COMM_WORLD, &world->rank_);
  MPI_Comm_size(MPI_COMM_WORLD, &world->size_);
  char name[MPI_MAX_PROCESSOR_NAME] = {};
  int length = 0;
  MPI_Get_processor_name(name, &length);
  world->host_.assign(name, static_cast<std::size_t>(length));
  std::vector<char> names(static_cast<std::size_t>(world->size_) * MPI_MAX_PROCESSOR_NAME);
  MPI_Allgather(name, MPI_MAX_PROCESSOR_NAME, MPI_CHAR, names.data(), MPI_MAX_PROCESSOR_NAME,
                MPI_CHAR, MPI_COMM_WORLD);
  std::set<std::string> distinct;
  for (int r = 0; r < world->size_; ++r) {
    const char* at = names.data() + static_cast<std::size_t>(r) * MPI_MAX_PROCESSOR_NAME;
    world->host_of_.emplace_back(at);
    distinct.insert(world->host_of_.back());
  }
  world->hosts_ = static_cast<int>(distinct.size());
  return world;
}

World::~World() { MPI_Finalize(); }

std::string World::who(int rank) const {
  return "rank " + std::to_string(rank) + " on " + host_of_[static_cast<std::size_t>(rank)];
}

void World::send(int to, int tag, const std::vector<char>& bytes) const {
  // The size first, then the bytes in pieces that fit MPI's int counts.
  const auto size = static_cast<std::uint64_t>(bytes.size());
  MPI_Send(&size, 1, MPI_UINT64_T, to, tag, MPI_COMM_WORLD);
  for (std::size_t at = 0; at < bytes.size(); at += kPiece) {
    const std::size_t n = std::min(kPiece, bytes.size() - at);
    MPI_Send(bytes.data() + at, count_of(n), MPI_CHAR, to, tag, MPI_COMM_WORLD);
  }
}

void World::receive(int from, int tag, std::vector<char>& bytes) const {
  std::uint64_t size = 0;
  MPI_Recv(&size, 1, MPI_UINT64_T, from, tag, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
  bytes.resize(static_cast<std::size_t>(size));
  for (std::size_t at = 0; at < bytes.size(); at += kPiece) {
    const std::size_t n = std::min(kPiece, bytes.size() - at);
    MPI_Recv(bytes.data() + at, count_of(n), MPI_CHAR, from, tag, MPI_COMM_WORLD,
             MPI_STATUS_IGNORE);
  }
}

bool World::poll(int& from, int& tag, std::vector<char>& bytes) const {
  int waiting = 0;
  MPI_Status status;
  MPI_Iprobe(MPI_ANY_SOURCE, MPI_ANY_TAG, MPI_COMM_WORLD, &waiting, &status);
  if (!waiting) return false;
  from = status.MPI_SOURCE;
  tag = status.MPI_TAG;
  // Messages from one rank are not overtaken by later ones with the same tag, and the
  // size header is followed by its pieces on the same (source, tag).
  receive(from, tag, bytes);
  return true;
}

void World::broadcast(std::vector<char>& bytes, int root) const {
  auto size = static_cast<std::uint64_t>(bytes.size());
  MPI_Bcast(&size, 1, MPI_UINT64_T, root, MPI_COMM_WORLD);
  bytes.resize(static_cast<std::size_t>(size));
  for (std::size_t at = 0; at < bytes.size(); at += kPiece) {
    const std::size_t n = std::min(kPiece, bytes.size() - at);
    MPI_Bcast(bytes.data() + at, count_of(n), MPI_CHAR, root, MPI_COMM_WORLD);
  }
}

Status World::agree(const Status& mine) const {
  const int failed = mine.ok() ? std::numeric_limits<int>::max() : rank_;
  int first = 0;
  MPI_Allreduce(&failed, &first, 1, MPI_INT, MPI_MIN, MPI_COMM_WORLD);
  if (first == std::numeric_limits<int>::max()) return Status::ok_status();
  wire::Packer packed;
  if (rank_ == first) wire::put_status(packed, mine);
  broadcast(packed.bytes(), first);
  Status status;
  wire::Unpacker in(packed.bytes().data(), packed.bytes().size());
  if (!wire::get_status(in, status) || status.ok()) {
    return Status::internal(who(first) + ": a failure arrived garbled");
  }
  return Status(status.code(), who(first) + ": " + status.message());
}

void World::barrier() const { MPI_Barrier(MPI_COMM_WORLD); }

}  // namespace credence::mpi
