// atomic_file.hpp (io-private) -- write to a temporary file in the destination directory, then move it
// into place. The destination is never replaced unless `overwrite` is set; on failure (destructor
// without Commit) the temporary file is removed, so no half-written output is left behind.
#pragma once

#include <string>

namespace zeeline::io_detail {

class TempOutputFile {
 public:
  /// Throws FitsError when the destination exists and !overwrite, or its directory is not writable.
  TempOutputFile(const std::string& final_path, bool overwrite);
  /// The same with a chosen working file `work_path` (kept, not removed, when not committed: the partial map
  /// file of --resume). It may exist; the writer decides whether to reuse or replace it.
  TempOutputFile(const std::string& final_path, bool overwrite, const std::string& work_path);
  ~TempOutputFile();
  TempOutputFile(const TempOutputFile&) = delete;
  TempOutputFile& operator=(const TempOutputFile&) = delete;

  /// A path that does not exist yet (cfitsio and cairo create it).
  const std::string& temp_path() const { return temp_; }
  /// Moves the temporary file onto the destination; throws FitsError on failure.
  void Commit();

 private:
  std::string final_, temp_;
  bool overwrite_ = false;
  bool committed_ = false;
  bool keep_ = false;  // a chosen working file stays when not committed
};

}  // namespace zeeline::io_detail
