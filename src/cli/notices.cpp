#include "cli/notices.hpp"

#include <cstdio>

namespace zeeline::cli {
namespace {
thread_local NoticeCollector* active = nullptr;
}  // namespace

NoticeCollector::NoticeCollector() : previous_(active) { active = this; }
NoticeCollector::~NoticeCollector() { active = previous_; }

void Notice(const std::string& text) {
  if (active) {
    active->notices_.push_back(text);
    return;
  }
  std::fprintf(stderr, "%s\n", text.c_str());
}

}  // namespace zeeline::cli
