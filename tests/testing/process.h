// Starts the credence executable as a child process that a test can signal and wait for.
#pragma once

#include <signal.h>
#include <fcntl.h>
#include <spawn.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <string>
#include <thread>
#include <vector>

extern char** environ;

namespace credence::testing {

class ChildProcess {
 public:
  /// Runs CREDENCE_BIN with `args`; its stdout and stderr go to `log_path`.
  ChildProcess(const std::vector<std::string>& args, const std::string& log_path) {
    std::vector<std::string> argv_text = {CREDENCE_BIN};
    argv_text.insert(argv_text.end(), args.begin(), args.end());
    std::vector<char*> argv;
    for (std::string& a : argv_text) argv.push_back(a.data());
    argv.push_back(nullptr);
    posix_spawn_file_actions_t actions;
    posix_spawn_file_actions_init(&actions);
    posix_spawn_file_actions_addopen(&actions, 1, log_path.c_str(), O_WRONLY | O_CREAT | O_TRUNC,
                                     0644);
    posix_spawn_file_actions_adddup2(&actions, 1, 2);
    if (posix_spawn(&pid_, CREDENCE_BIN, &actions, nullptr, argv.data(), environ) != 0) pid_ = -1;
    posix_spawn_file_actions_destroy(&actions);
  }
  ~ChildProcess() {
    if (pid_ > 0 && !waited_) {
      ::kill(pid_, SIGKILL);
      wait();
    }
  }
  ChildProcess(const ChildProcess&) = delete;
  ChildProcess& operator=(const ChildProcess&) = delete;

  bool started() const { return pid_ > 0; }
  void signal(int sig) const { ::kill(pid_, sig); }

  /// Waits for the child; its exit code, or 128 + signal number when a signal ended it.
  int wait() {
    if (waited_) return exit_code_;
    int status = 0;
    waitpid(pid_, &status, 0);
    waited_ = true;
    exit_code_ = WIFEXITED(status) ? WEXITSTATUS(status) : 128 + WTERMSIG(status);
    return exit_code_;
  }

  /// True when the child has already ended.
  bool ended() {
    if (waited_) return true;
    int status = 0;
    pid_t r = waitpid(pid_, &status, WNOHANG);
    if (r == pid_) {
      waited_ = true;
      exit_code_ = WIFEXITED(status) ? WEXITSTATUS(status) : 128 + WTERMSIG(status);
    }
    return waited_;
  }
  int exit_code() const { return exit_code_; }

 private:
  pid_t pid_ = -1;
  bool waited_ = false;
  int exit_code_ = -1;
};

}  // namespace credence::testing
