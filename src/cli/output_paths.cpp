#include "cli/output_paths.hpp"

#include <unistd.h>

#include <filesystem>
#include <system_error>

#include "cli/commands.hpp"
#include "io/atomic_file.hpp"
#include "synth/profile_plot.hpp"
#include "zeeline/core/errors.hpp"

namespace zeeline::cli {
namespace {

namespace fs = std::filesystem;

// The directory a path lives in ("." for a bare file name).
fs::path ParentOf(const std::string& path) {
  const fs::path p(path);
  return p.has_parent_path() ? p.parent_path() : fs::path(".");
}

void RequireWritableDirectory(const fs::path& dir, const std::string& path, const std::string& what) {
  std::error_code ec;
  const std::string prefix = what + " " + path + ": ";
  if (!fs::exists(dir, ec))
    throw OutputError(prefix + "directory '" + dir.string() +
                      "' does not exist (zeeline does not create parent directories; nothing was computed)");
  if (!fs::is_directory(dir, ec))
    throw OutputError(prefix + "'" + dir.string() + "' is not a directory (nothing was computed)");
  if (::access(dir.c_str(), W_OK | X_OK) != 0)
    throw OutputError(prefix + "directory '" + dir.string() + "' is not writable (nothing was computed)");
}

}  // namespace

void CheckOutputFile(const std::string& path, bool overwrite, const std::string& what) {
  if (path.empty()) return;
  std::error_code ec;
  if (fs::is_directory(path, ec)) throw OutputError(what + " " + path + ": is a directory, expected a file name");
  if (fs::exists(path, ec) && !overwrite)
    throw OutputError(path + ": exists; use --overwrite to replace it (nothing was written)");
  RequireWritableDirectory(ParentOf(path), path, what);
}

void CheckOutputDirectory(const std::string& dir, const std::string& what) {
  if (dir.empty()) return;
  std::error_code ec;
  if (fs::exists(dir, ec)) {
    if (!fs::is_directory(dir, ec)) throw OutputError(what + " " + dir + ": exists and is not a directory");
    RequireWritableDirectory(fs::path(dir), dir, what);
    return;
  }
  fs::path d(dir);
  if (!d.has_filename()) d = d.parent_path();  // "out/" -> "out"
  RequireWritableDirectory(ParentOf(d.string()), dir, what);
}

void CreateOutputDirectory(const std::string& dir, const std::string& what) {
  std::error_code ec;
  if (dir.empty() || fs::is_directory(dir, ec)) return;
  fs::create_directory(dir, ec);
  if (ec) throw OutputError(what + " " + dir + ": cannot create the directory: " + ec.message());
}

void WriteOutputAtomically(const std::string& path, bool overwrite, const std::function<void(const std::string&)>& write) {
  try {
    io_detail::TempOutputFile out(path, overwrite);
    write(out.temp_path());
    out.Commit();
  } catch (const PlotError& e) {
    throw OutputError(e.what());
  } catch (const FitsError& e) {
    throw OutputError(e.what());
  }
}

}  // namespace zeeline::cli
