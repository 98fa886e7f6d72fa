// output_paths.hpp (CLI-private) -- the one rule for every output of every command (docs/cli.md,
// "Outputs"): checked before any computation, exit 3 (OutputError) when the output exists without
// --overwrite or its directory is missing, not a directory or not writable. zeeline never creates missing
// parent directories; an output that is itself a directory (--png DIR, view -o DIR) is created when its
// parent exists.
#pragma once

#include <functional>
#include <string>

namespace zeeline::cli {

/// A file output: `what` names it in the message (e.g. "-o", "--png").
void CheckOutputFile(const std::string& path, bool overwrite, const std::string& what);

/// A directory output: either an existing writable directory, or a missing one whose parent exists and
/// is writable (it is created by CreateOutputDirectory).
void CheckOutputDirectory(const std::string& dir, const std::string& what);

/// Creates `dir` (one level; its parent must exist) unless it exists; throws OutputError on failure.
void CreateOutputDirectory(const std::string& dir, const std::string& what);

/// Calls write(temporary path) and renames the result onto `path` (nothing is left behind on failure);
/// PlotError, FitsError and std::ios failures become OutputError (exit 3).
void WriteOutputAtomically(const std::string& path, bool overwrite, const std::function<void(const std::string&)>& write);

}  // namespace zeeline::cli
