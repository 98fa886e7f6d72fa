// interrupt.hpp (CLI-private) -- Ctrl-C during a long run (map, simulate): while an InterruptGuard lives,
// SIGINT only sets a flag that the library polls (FieldMapRunOptions::cancel,
// SceneSynthesisOptions::cancel); the command then prints what happened and exits 130 (docs/cli.md).
#pragma once

#include <atomic>

namespace zeeline::cli {

class InterruptGuard {
 public:
  InterruptGuard();   ///< clears the flag and installs the handler
  ~InterruptGuard();  ///< restores the previous handler
  InterruptGuard(const InterruptGuard&) = delete;
  InterruptGuard& operator=(const InterruptGuard&) = delete;

  const std::atomic<bool>* flag() const;
  bool interrupted() const { return flag()->load(); }

 private:
  void (*previous_)(int) = nullptr;
};

}  // namespace zeeline::cli
