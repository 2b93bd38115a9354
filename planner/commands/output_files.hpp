// Writing the tool's output files so that a reader never sees half of one, and a report never
// shows a page from one run beside tables from another, whatever happens to the process
// (SIGKILL, a full disk, a file-size limit) at whatever moment.
//
// One file (plan --write): written under a temporary name beside the target
// (".NAME.peakplan-tmp-PID"), flushed to disk, then renamed over the target: the name holds
// the complete old file or the complete new one. The temporary file is flock()ed while it is
// written, so a later run removes any such name nobody holds (the leftover of a killed run)
// and never one another live run is writing.
//
// A report directory (report --out DIR): every report name in DIR is a relative symbolic link
// into one version of the whole set,
//   DIR/index.html -> .peakplan/current/index.html        (and so on for every report file)
//   DIR/.peakplan/current -> r-<run id>                    (the one link a run swaps)
//   DIR/.peakplan/r-<run id>/index.html ...                (a complete report set)
//   DIR/.peakplan/lock                                     (flock()ed while a run writes)
// A run writes the new set into a fresh DIR/.peakplan/r-<id>, flushes and reads every file
// back, creates the per-name links (a name new to the report dangles, i.e. is absent, until the
// swap), and then replaces `current` with one rename(2), which the kernel performs atomically:
// before it every name resolves into the old set, after it into the new one, and no moment has
// a mix. Only then are the old set and the links of names no longer in the report removed. A
// report written by an older peakplan (plain files in DIR) is first taken into a version of its
// own by hard links, so even that first swap is old-or-new. Files in DIR that are not report
// names are never touched; everything temporary lives in DIR/.peakplan, and a run (holding the
// lock) removes whatever there is neither `current` nor its target before it writes. The links
// are relative, so DIR may be moved, copied with `cp -a` or archived with tar as it is.
#pragma once

#include <filesystem>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace peakplan::cli {

// Why an output could not be written: the path concerned and the system's reason (strerror).
struct WriteFailure {
  std::string path;
  std::string reason;
  std::string format() const;  // "PATH: error: cannot write: REASON"
};

// `text` to `path`, whole or not at all (see above). Refuses a directory in the way.
std::optional<WriteFailure> write_file_atomically(const std::filesystem::path& path, std::string_view text);

struct OutputFile {
  std::string name;  // a plain file name, no directory
  std::string_view contents;
};

// Replaces the report set in `dir` (created, with its parents, when missing) as one whole.
std::optional<WriteFailure> write_report_directory(const std::filesystem::path& dir,
                                                   const std::vector<OutputFile>& files);

// The name of the directory inside a report directory that holds the versions and the lock.
inline constexpr std::string_view kReportStore = ".peakplan";

}  // namespace peakplan::cli
