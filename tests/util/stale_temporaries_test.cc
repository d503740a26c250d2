// remove_stale_temporaries: what a kill -9 left beside an output is cleared by the next
// run, and nothing else is (a live process's temporary, other files, other outputs).
#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <filesystem>
#include <string>

#include "testing/temp_dir.h"
#include "util/atomic_file.h"

namespace credence {
namespace {

namespace fs = std::filesystem;

// The pid of a process that has ended and been reaped.
pid_t ended_pid() {
  const pid_t child = ::fork();
  if (child == 0) ::_exit(0);
  int status = 0;
  ::waitpid(child, &status, 0);
  return child;
}

TEST(StaleTemporaries, RemovesOnlyThoseOfEndedProcesses) {
  testing::TempDir dir;
  const std::string out = (dir.path() / "pred.csv").string();
  const std::string dead = std::to_string(ended_pid());
  const std::string alive = std::to_string(::getpid());
  for (const std::string& name :
       {"pred.csv.tmp-" + dead, "pred.csv.tmp-" + alive, "pred.csv.tmp-" + dead + ".tmp-" + dead,
        std::string("pred.csv.tmp-notapid"), "pred.csv.partial-" + dead, "other.csv.tmp-" + dead,
        std::string("pred.csv")}) {
    dir.write(name, "x");
  }
  EXPECT_EQ(remove_stale_temporaries(out, "tmp"), 2);
  EXPECT_FALSE(fs::exists(dir.path() / ("pred.csv.tmp-" + dead)));
  EXPECT_FALSE(fs::exists(dir.path() / ("pred.csv.tmp-" + dead + ".tmp-" + dead)));
  for (const std::string& kept :
       {"pred.csv.tmp-" + alive, std::string("pred.csv.tmp-notapid"), "pred.csv.partial-" + dead,
        "other.csv.tmp-" + dead, std::string("pred.csv")}) {
    EXPECT_TRUE(fs::exists(dir.path() / kept)) << kept;
  }
  EXPECT_EQ(temporary_path(out, "tmp"), out + ".tmp-" + alive);
}

}  // namespace
}  // namespace credence
