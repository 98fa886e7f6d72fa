#include "cli/interrupt.hpp"

#include <csignal>

namespace zeeline::cli {
namespace {
std::atomic<bool> g_interrupted{false};
extern "C" void OnInterrupt(int) { g_interrupted.store(true); }
}  // namespace

InterruptGuard::InterruptGuard() {
  g_interrupted.store(false);
  previous_ = std::signal(SIGINT, OnInterrupt);
}

InterruptGuard::~InterruptGuard() { std::signal(SIGINT, previous_ == SIG_ERR ? SIG_DFL : previous_); }

const std::atomic<bool>* InterruptGuard::flag() const { return &g_interrupted; }

}  // namespace zeeline::cli
