#include "io/atomic_file.hpp"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <vector>

#include "zeeline/core/errors.hpp"

namespace zeeline::io_detail {
namespace {

bool Exists(const std::string& p) {
  struct stat sb {};
  return ::lstat(p.c_str(), &sb) == 0;
}

std::string ExistsMessage(const std::string& p) {
  return "'" + p + "' already exists; refusing to overwrite it (use the overwrite option / --overwrite)";
}

// The destination may be replaced only with `overwrite`, and never when it is a directory.
void CheckDestination(const std::string& final_path, bool overwrite) {
  if (!Exists(final_path)) return;
  if (!overwrite) throw FitsError(ExistsMessage(final_path));
  struct stat sb {};
  if (::stat(final_path.c_str(), &sb) == 0 && S_ISDIR(sb.st_mode))
    throw FitsError("'" + final_path + "' is a directory, not an output file");
}

}  // namespace

TempOutputFile::TempOutputFile(const std::string& final_path, bool overwrite)
    : final_(final_path), overwrite_(overwrite) {
  if (final_.empty()) throw FitsError("output file name is empty");
  CheckDestination(final_, overwrite_);
  const auto slash = final_.find_last_of('/');
  const std::string dir = slash == std::string::npos ? "." : (slash == 0 ? "/" : final_.substr(0, slash));
  const std::string base = slash == std::string::npos ? final_ : final_.substr(slash + 1);
  std::string templ = dir + "/." + base + ".tmp-XXXXXX";
  std::vector<char> buf(templ.begin(), templ.end());
  buf.push_back('\0');
  const int fd = ::mkstemp(buf.data());
  if (fd < 0) {
    throw FitsError("cannot create a temporary file in '" + dir + "' for '" + final_ + "': " + std::strerror(errno));
  }
  ::close(fd);
  temp_ = buf.data();
  ::unlink(temp_.c_str());  // the writers create the file themselves; the unique name stays ours
}

TempOutputFile::TempOutputFile(const std::string& final_path, bool overwrite, const std::string& work_path)
    : final_(final_path), temp_(work_path), overwrite_(overwrite), keep_(true) {
  if (final_.empty() || temp_.empty()) throw FitsError("output file name is empty");
  CheckDestination(final_, overwrite_);
}

TempOutputFile::~TempOutputFile() {
  if (!committed_ && !keep_) ::unlink(temp_.c_str());
}

void TempOutputFile::Commit() {
  if (overwrite_) {
    if (::rename(temp_.c_str(), final_.c_str()) != 0)
      throw FitsError("cannot move the finished file onto '" + final_ + "': " + std::strerror(errno));
    committed_ = true;
    return;
  }
  // No-clobber move: link() fails with EEXIST if the destination appeared meanwhile.
  if (::link(temp_.c_str(), final_.c_str()) == 0) {
    ::unlink(temp_.c_str());
    committed_ = true;
    return;
  }
  if (errno == EEXIST) throw FitsError(ExistsMessage(final_));
  // File systems without hard links: check, then rename.
  if (Exists(final_)) throw FitsError(ExistsMessage(final_));
  if (::rename(temp_.c_str(), final_.c_str()) != 0)
    throw FitsError("cannot move the finished file onto '" + final_ + "': " + std::strerror(errno));
  committed_ = true;
}

}  // namespace zeeline::io_detail
