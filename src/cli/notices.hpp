// notices.hpp (CLI-private) -- cautions a command gives beside its --json result (lab safety notes): the
// program writes them to stderr; a program that embeds the commands (the Python module) collects them on
// its thread instead and shows them its own way (Python warnings).
#pragma once

#include <string>
#include <vector>

namespace zeeline::cli {

/// Writes `text` and a newline to stderr, or appends it to the collector active on this thread.
void Notice(const std::string& text);

/// While it lives, Notice() on this thread appends to notices() instead of writing to stderr.
class NoticeCollector {
 public:
  NoticeCollector();
  ~NoticeCollector();
  NoticeCollector(const NoticeCollector&) = delete;
  NoticeCollector& operator=(const NoticeCollector&) = delete;
  const std::vector<std::string>& notices() const { return notices_; }

 private:
  friend void Notice(const std::string& text);
  std::vector<std::string> notices_;
  NoticeCollector* previous_;
};

}  // namespace zeeline::cli
