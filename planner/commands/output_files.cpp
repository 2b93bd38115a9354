#include "planner/commands/output_files.hpp"

#include <fcntl.h>
#include <fmt/format.h>
#include <signal.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <cerrno>
#include <chrono>
#include <cstring>
#include <set>
#include <system_error>

namespace peakplan::cli {
namespace {

namespace fs = std::filesystem;

constexpr std::string_view kTemporaryMark = ".peakplan-tmp-";   // ".NAME.peakplan-tmp-PID"
constexpr std::string_view kLegacyTemporary = ".peakplan-tmp";  // "NAME.peakplan-tmp", peakplan 0.1
constexpr std::string_view kVersionPrefix = "r-";
constexpr const char* kCurrent = "current";
constexpr const char* kLock = "lock";

// A file descriptor closed when it goes.
struct Descriptor {
  int fd = -1;
  explicit Descriptor(int f) : fd(f) {}
  ~Descriptor() {
    if (fd >= 0) ::close(fd);
  }
  Descriptor(const Descriptor&) = delete;
  Descriptor& operator=(const Descriptor&) = delete;
};

WriteFailure failure(const fs::path& path, int error) { return {path.string(), std::strerror(error)}; }

// The system's reason, with what it means for the user's path when the bare strerror would
// leave them guessing which part of the path is wrong.
WriteFailure failure_at(const fs::path& path, int error) {
  auto f = failure(path, error);
  const auto parent = path.parent_path().empty() ? fs::path(".") : path.parent_path();
  struct stat st {};
  if (error == ENOENT && ::stat(parent.c_str(), &st) != 0)
    f.reason += " (the directory " + parent.string() + " does not exist)";
  else if (error == ENOTDIR)
    f.reason += " (a part of the path that should be a directory is a file)";
  return f;
}

// Writes every byte, then flushes the file to the device. fsync is not supported everywhere
// (EINVAL on some special file systems); that is no reason to fail.
int write_all(int fd, std::string_view text) {
  size_t done = 0;
  while (done < text.size()) {
    const ssize_t n = ::write(fd, text.data() + done, text.size() - done);
    if (n < 0) {
      if (errno == EINTR) continue;
      return errno;
    }
    done += static_cast<size_t>(n);
  }
  if (::fsync(fd) != 0 && errno != EINVAL && errno != EROFS) return errno;
  return 0;
}

// Makes a rename or a new entry in `dir` durable.
void sync_directory(const fs::path& dir) {
  const Descriptor d(::open(dir.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC));
  if (d.fd >= 0) ::fsync(d.fd);
}

bool process_alive(long pid) { return pid > 0 && (::kill(static_cast<pid_t>(pid), 0) == 0 || errno == EPERM); }

// Removes the leftovers of killed writes of `name` in `dir`: ".NAME.peakplan-tmp-PID" whose
// process is gone, and the older "NAME.peakplan-tmp". Failures are ignored: a leftover that
// cannot be removed does no harm, and the write that follows reports a real problem itself.
void remove_stale_temporaries(const fs::path& dir, const std::string& name) {
  std::error_code ec;
  const std::string prefix = "." + name + std::string(kTemporaryMark);
  for (fs::directory_iterator it(dir, ec), end; !ec && it != end; it.increment(ec)) {
    const std::string entry = it->path().filename().string();
    if (entry == name + std::string(kLegacyTemporary)) {
      ::unlink(it->path().c_str());
    } else if (entry.starts_with(prefix)) {
      const std::string pid = entry.substr(prefix.size());
      if (pid.empty() || pid.find_first_not_of("0123456789") != std::string::npos) continue;
      if (!process_alive(std::stol(pid))) ::unlink(it->path().c_str());
    }
  }
}

// Creates `path` (which must not exist) holding `text`, flushed, and reads it back.
std::optional<WriteFailure> create_file(const fs::path& path, std::string_view text, const fs::path& named) {
  const Descriptor d(::open(path.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC | O_NOFOLLOW, 0666));
  if (d.fd < 0) return failure_at(named, errno);
  if (const int error = write_all(d.fd, text)) return failure(named, error);
  struct stat st {};
  if (::fstat(d.fd, &st) != 0) return failure(named, errno);
  if (static_cast<size_t>(st.st_size) != text.size())
    return WriteFailure{named.string(), fmt::format("wrote {} bytes of {}", st.st_size, text.size())};
  return std::nullopt;
}

// The bytes of `path` equal `text` (a check of what the file system kept, before a swap).
bool reads_back(const fs::path& path, std::string_view text) {
  const Descriptor d(::open(path.c_str(), O_RDONLY | O_CLOEXEC));
  if (d.fd < 0) return false;
  std::string buffer(64 * 1024, '\0');
  size_t at = 0;
  for (;;) {
    const ssize_t n = ::read(d.fd, buffer.data(), buffer.size());
    if (n < 0 && errno == EINTR) continue;
    if (n < 0) return false;
    if (n == 0) return at == text.size();
    if (at + static_cast<size_t>(n) > text.size() ||
        std::memcmp(buffer.data(), text.data() + at, static_cast<size_t>(n)) != 0)
      return false;
    at += static_cast<size_t>(n);
  }
}

// A run id unique among live and earlier runs: the process id and a clock reading.
std::string run_id() {
  static std::atomic<unsigned> counter{0};
  const auto ns =
      std::chrono::duration_cast<std::chrono::nanoseconds>(std::chrono::system_clock::now().time_since_epoch()).count();
  return fmt::format("{}-{:x}-{}", ::getpid(), ns, counter++);
}

std::optional<std::string> link_target(const fs::path& path) {
  std::error_code ec;
  const auto target = fs::read_symlink(path, ec);
  if (ec) return std::nullopt;
  return target.string();
}

std::string report_link_text(const std::string& name) {
  return std::string(kReportStore) + "/" + kCurrent + "/" + name;
}

// Atomically makes `at` a symbolic link holding `text`, through a temporary link in `store`.
std::optional<WriteFailure> place_link(const fs::path& store, const std::string& text, const fs::path& at) {
  const fs::path temporary = store / ("link.tmp-" + run_id());
  if (::symlink(text.c_str(), temporary.c_str()) != 0) return failure(at, errno);
  if (::rename(temporary.c_str(), at.c_str()) != 0) {
    const int error = errno;
    ::unlink(temporary.c_str());
    return failure(at, error);
  }
  return std::nullopt;
}

// A fresh, empty version directory in `store`; its name is returned.
std::optional<std::string> make_version(const fs::path& store, WriteFailure& failed) {
  for (int attempt = 0; attempt < 100; ++attempt) {
    const std::string name = std::string(kVersionPrefix) + run_id();
    if (::mkdir((store / name).c_str(), 0777) == 0) return name;
    if (errno != EEXIST) {
      failed = failure(store.parent_path(), errno);  // the report directory is what the user named
      return std::nullopt;
    }
  }
  failed = failure(store.parent_path(), EEXIST);
  return std::nullopt;
}

void remove_tree(const fs::path& path) {
  std::error_code ec;
  fs::remove_all(path, ec);
}

// A report store, locked for the life of this object.
class Store {
 public:
  explicit Store(fs::path dir) : dir_(std::move(dir)), path_(dir_ / kReportStore) {}

  std::optional<WriteFailure> open() {
    if (::mkdir(path_.c_str(), 0777) != 0 && errno != EEXIST) return failure_at(dir_, errno);
    struct stat st {};
    if (::lstat(path_.c_str(), &st) != 0) return failure(dir_, errno);
    if (!S_ISDIR(st.st_mode)) return failure(path_, ENOTDIR);
    lock_ = ::open((path_ / kLock).c_str(), O_RDWR | O_CREAT | O_CLOEXEC | O_NOFOLLOW, 0666);
    if (lock_ < 0) return failure(dir_, errno);
    // Another run on the same directory finishes first; a killed one held nothing.
    while (::flock(lock_, LOCK_EX) != 0)
      if (errno != EINTR) return failure(dir_, errno);
    current_ = link_target(path_ / kCurrent).value_or("");
    if (current_.find('/') != std::string::npos || !current_.starts_with(kVersionPrefix)) current_.clear();
    remove_leftovers();
    return std::nullopt;
  }
  ~Store() {
    if (lock_ >= 0) ::close(lock_);
  }
  Store(const Store&) = delete;
  Store& operator=(const Store&) = delete;

  const fs::path& path() const { return path_; }
  const std::string& current() const { return current_; }

  // Points `current` at `version` with one rename.
  std::optional<WriteFailure> swap_to(const std::string& version) {
    if (auto f = place_link(path_, version, path_ / kCurrent)) return f;
    sync_directory(path_);
    current_ = version;
    return std::nullopt;
  }

  // Whatever a killed run left: every entry but the lock, `current` and its target.
  void remove_leftovers() {
    std::error_code ec;
    std::vector<fs::path> stale;
    for (fs::directory_iterator it(path_, ec), end; !ec && it != end; it.increment(ec)) {
      const std::string name = it->path().filename().string();
      if (name != kLock && name != kCurrent && name != current_) stale.push_back(it->path());
    }
    for (const auto& p : stale) remove_tree(p);
  }

 private:
  fs::path dir_, path_;
  int lock_ = -1;
  std::string current_;
};

// The regular files of a version directory, by name.
std::vector<std::string> version_names(const fs::path& version) {
  std::vector<std::string> names;
  std::error_code ec;
  for (fs::directory_iterator it(version, ec), end; !ec && it != end; it.increment(ec))
    if (it->is_regular_file()) names.push_back(it->path().filename().string());
  return names;
}

// Hard link (or, across file systems, copy) `from` to `to`.
std::optional<WriteFailure> keep_file(const fs::path& from, const fs::path& to) {
  if (::link(from.c_str(), to.c_str()) == 0) return std::nullopt;
  std::error_code ec;
  if (fs::copy_file(from, to, ec)) return std::nullopt;
  return failure(to, ec.value());
}

}  // namespace

std::string WriteFailure::format() const { return path + ": error: cannot write: " + reason + "\n"; }

std::optional<WriteFailure> write_file_atomically(const fs::path& path, std::string_view text) {
  struct stat st {};
  if (::lstat(path.c_str(), &st) == 0 && S_ISDIR(st.st_mode)) return failure(path, EISDIR);
  const fs::path parent = path.parent_path().empty() ? fs::path(".") : path.parent_path();
  const std::string name = path.filename().string();
  if (name.empty() || name == "." || name == "..") return failure(path, EISDIR);
  remove_stale_temporaries(parent, name);
  const fs::path temporary = parent / ("." + name + std::string(kTemporaryMark) + std::to_string(::getpid()));
  ::unlink(temporary.c_str());  // our own, from an earlier write in this process
  if (auto f = create_file(temporary, text, path)) {
    ::unlink(temporary.c_str());
    return f;
  }
  if (::rename(temporary.c_str(), path.c_str()) != 0) {
    const int error = errno;
    ::unlink(temporary.c_str());
    return failure(path, error);
  }
  sync_directory(parent);
  return std::nullopt;
}

namespace {

// write_report_directory on an existing directory.
std::optional<WriteFailure> replace_report(const fs::path& dir, const std::vector<OutputFile>& files) {
  struct stat st {};
  for (const auto& file : files)
    if (::lstat((dir / file.name).c_str(), &st) == 0 && S_ISDIR(st.st_mode)) return failure(dir / file.name, EISDIR);
  Store store(dir);
  if (auto f = store.open()) return f;
  const fs::path& store_path = store.path();
  for (const auto& file : files) ::unlink((dir / (file.name + std::string(kLegacyTemporary))).c_str());

  // Report names DIR shows other than through our links: a report of an older peakplan, or
  // the user's own file under a report name. They join a version of what DIR shows now, so
  // that replacing them with links changes nothing a reader sees until the swap.
  std::vector<std::string> foreign;
  for (const auto& file : files) {
    const fs::path at = dir / file.name;
    if (::lstat(at.c_str(), &st) != 0) continue;
    if (link_target(at) != report_link_text(file.name)) foreign.push_back(file.name);
  }
  const std::vector<std::string> old_names =
      store.current().empty() ? std::vector<std::string>{} : version_names(store_path / store.current());
  std::vector<std::string> retire;
  if (!foreign.empty()) {
    WriteFailure failed;
    const auto taken = make_version(store_path, failed);
    if (!taken) return failed;
    const fs::path version = store_path / *taken;
    for (const auto& name : old_names)
      if (std::find(foreign.begin(), foreign.end(), name) == foreign.end())
        if (auto f = keep_file(store_path / store.current() / name, version / name)) {
          remove_tree(version);
          return f;
        }
    for (const auto& name : foreign)
      if (::stat((dir / name).c_str(), &st) == 0 && S_ISREG(st.st_mode))
        if (auto f = keep_file(dir / name, version / name)) {
          remove_tree(version);
          return f;
        }
    sync_directory(version);
    if (!store.current().empty()) retire.push_back(store.current());
    if (auto f = store.swap_to(*taken)) {
      remove_tree(version);
      return f;
    }
    for (const auto& name : foreign)
      if (auto f = place_link(store_path, report_link_text(name), dir / name)) return f;
  }

  // The new set, complete and checked, before anything a reader sees changes.
  WriteFailure failed;
  const auto fresh = make_version(store_path, failed);
  if (!fresh) return failed;
  const fs::path version = store_path / *fresh;
  for (const auto& file : files) {
    if (auto f = create_file(version / file.name, file.contents, dir / file.name)) {
      remove_tree(version);
      return f;
    }
    if (!reads_back(version / file.name, file.contents)) {
      remove_tree(version);
      return WriteFailure{(dir / file.name).string(), "the file read back differs from what was written"};
    }
  }
  sync_directory(version);

  // Links for names new to the report: they dangle (the name is absent) until the swap.
  std::vector<fs::path> created;
  for (const auto& file : files) {
    const fs::path at = dir / file.name;
    if (link_target(at) == report_link_text(file.name)) continue;
    if (auto f = place_link(store_path, report_link_text(file.name), at)) {
      for (const auto& p : created) ::unlink(p.c_str());
      remove_tree(version);
      return f;
    }
    created.push_back(at);
  }
  sync_directory(dir);

  if (!store.current().empty()) retire.push_back(store.current());
  if (auto f = store.swap_to(*fresh)) {
    for (const auto& p : created) ::unlink(p.c_str());
    remove_tree(version);
    return f;
  }

  // After the swap: names the new report no longer has, and the old versions.
  std::set<std::string> now;
  for (const auto& file : files) now.insert(file.name);
  for (const auto& name : old_names)
    if (!now.count(name) && link_target(dir / name) == report_link_text(name)) ::unlink((dir / name).c_str());
  for (const auto& old : retire) remove_tree(store_path / old);
  sync_directory(dir);
  return std::nullopt;
}

}  // namespace

std::optional<WriteFailure> write_report_directory(const fs::path& dir, const std::vector<OutputFile>& files) {
  struct stat st {};
  if (::stat(dir.c_str(), &st) == 0) {
    if (!S_ISDIR(st.st_mode)) return failure(dir, ENOTDIR);
    return replace_report(dir, files);
  }
  std::error_code ec;
  fs::create_directories(dir, ec);
  if (ec) return failure_at(dir, ec.value());
  auto failed = replace_report(dir, files);
  if (failed) remove_tree(dir);  // created by this run and holding nothing but its own files
  return failed;
}

}  // namespace peakplan::cli
