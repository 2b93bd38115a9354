// Outputs under the faults of a user's machine, through the real executable:
//   - an output that cannot be written (a missing directory, a file where a directory should
//     be, a directory in the way, /proc, a read-only or immutable directory, a full disk, a
//     file-size limit) exits 4 with the path and the system's reason, and changes nothing;
//   - a report over an older one, killed with SIGKILL at random moments, leaves the old set or
//     the new set and never a mix, and the next run leaves no temporary name; plan --write
//     likewise leaves the old file or the new one;
//   - SIGINT and SIGTERM stop a long plan with 130 and 143 and nothing written;
//   - the chain file: "-" is standard input, and a directory, an empty, binary or oversized
//     file and a 200 kB dotted key are positioned errors with exit 2.
// The statuses are docs/output.md's contract as extended here (4, 130, 143); 128 + the
// signal number is the shell's convention (POSIX, "common practice"). Checks that need a
// tmpfs mount or chattr are skipped with a message where the platform does not allow them.
#include <doctest/doctest.h>

#include <fcntl.h>
#include <signal.h>
#include <sys/mount.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/statvfs.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <filesystem>
#include <functional>
#include <map>
#include <nlohmann/json.hpp>
#include <random>
#include <set>
#include <string>
#include <thread>
#include <vector>

#include "cli_support.hpp"
#include "six_open_stages.hpp"

namespace fs = std::filesystem;
using namespace peakplan::test;

namespace {

const fs::path kSource = PEAKPLAN_SOURCE_DIR;
const fs::path kDemo = kSource / "chains" / "demo_postamp.toml";       // has a [signal]: eye.svg
const fs::path kFanout = kSource / "chains" / "fanout_tap.toml";       // no [signal]: no eye.svg
const fs::path kPlanned = kSource / "chains" / "plan_limiting_amp.toml";  // open values, a short plan

// A started peakplan process with stdout and stderr in files of its own.
struct Child {
  pid_t pid = -1;
  fs::path out, err;
};

// Starts peakplan with `args`, standard input from `in`; `prepare` runs in the child before
// exec (a resource limit). Only async-signal-safe work happens between fork and exec.
Child spawn(const TempDir& capture, const std::vector<std::string>& args, const fs::path& in = "/dev/null",
            const std::function<void()>& prepare = {}) {
  Child child{-1, capture.path / "stdout", capture.path / "stderr"};
  std::vector<std::string> words{PEAKPLAN_BINARY};
  words.insert(words.end(), args.begin(), args.end());
  std::vector<char*> argv;
  for (auto& w : words) argv.push_back(w.data());
  argv.push_back(nullptr);
  const std::string in_path = in.string(), out_path = child.out.string(), err_path = child.err.string();
  child.pid = ::fork();
  REQUIRE(child.pid >= 0);
  if (child.pid == 0) {
    const int i = ::open(in_path.c_str(), O_RDONLY);
    const int o = ::open(out_path.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
    const int e = ::open(err_path.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
    if (i < 0 || o < 0 || e < 0) ::_exit(120);
    ::dup2(i, 0);
    ::dup2(o, 1);
    ::dup2(e, 2);
    if (prepare) prepare();
    ::execv(argv[0], argv.data());
    ::_exit(121);
  }
  return child;
}

// The child's exit status (128 + the signal when a signal ended it). A child still running
// after `patience` is a hang: killed, and the test fails.
int wait_for(const Child& child, std::chrono::milliseconds patience = std::chrono::seconds(60)) {
  const auto until = std::chrono::steady_clock::now() + patience;
  int raw = 0;
  while (::waitpid(child.pid, &raw, WNOHANG) == 0) {
    if (std::chrono::steady_clock::now() > until) {
      ::kill(child.pid, SIGKILL);
      ::waitpid(child.pid, &raw, 0);
      FAIL("peakplan did not exit within " << patience.count() << " ms");
    }
    std::this_thread::sleep_for(std::chrono::milliseconds(2));
  }
  return WIFEXITED(raw) ? WEXITSTATUS(raw) : 128 + WTERMSIG(raw);
}

CliRun run(const std::vector<std::string>& args, const fs::path& in = "/dev/null",
           const std::function<void()>& prepare = {}) {
  TempDir capture("peakplan_outputs_cli");
  const Child child = spawn(capture, args, in, prepare);
  CliRun r;
  r.status = wait_for(child);
  r.out = read_file(child.out);
  r.err = read_file(child.err);
  return r;
}

bool contains(const std::string& text, const std::string& fragment) { return text.find(fragment) != std::string::npos; }

// What DIR shows a reader: every entry but the report store and `others`, read through the
// links; a link that leads nowhere is an absent name, not a file.
std::map<std::string, std::string> shown(const fs::path& dir, const std::set<std::string>& others = {"notes.txt"}) {
  std::map<std::string, std::string> files;
  for (const auto& e : fs::directory_iterator(dir)) {
    const std::string name = e.path().filename().string();
    if (name == ".peakplan" || others.count(name)) continue;
    std::error_code ec;
    if (fs::is_regular_file(e.path(), ec)) files[name] = read_file(e.path());
  }
  return files;
}

// Every file of a report set is complete by its own format (the brief's check, independent of
// the byte-for-byte comparison with a reference): HTML ends with </html>, SVG with </svg>,
// JSON parses, the CSV ends its last record with CRLF (RFC 4180) and the netlist with .end.
void check_complete(const std::map<std::string, std::string>& files) {
  for (const auto& [name, text] : files) {
    INFO("file: " << name);
    const auto trimmed = text.substr(0, text.find_last_not_of(" \r\n") + 1);
    const auto extension = fs::path(name).extension().string();
    if (extension == ".html") CHECK(trimmed.ends_with("</html>"));
    if (extension == ".svg") CHECK(trimmed.ends_with("</svg>"));
    if (extension == ".json") CHECK(nlohmann::json::accept(text));
    if (extension == ".csv") CHECK(text.ends_with("\r\n"));
    if (extension == ".cir") CHECK(trimmed.ends_with(".end"));
  }
}

// The entries of DIR/.peakplan: after a finished run, exactly the lock, `current` and one
// version (planner/commands/output_files.hpp).
std::multiset<std::string> store_entries(const fs::path& dir) {
  std::multiset<std::string> entries;
  for (const auto& e : fs::directory_iterator(dir / ".peakplan")) {
    const std::string name = e.path().filename().string();
    entries.insert(name.starts_with("r-") ? "r-" : name);
  }
  return entries;
}
const std::multiset<std::string> kFinishedStore{"current", "lock", "r-"};

// No name that a write uses while it runs, anywhere below `dir`.
void check_no_temporaries(const fs::path& dir) {
  for (const auto& e : fs::recursive_directory_iterator(dir)) {
    const std::string name = e.path().filename().string();
    INFO("entry: " << e.path().string());
    CHECK_FALSE(contains(name, "peakplan-tmp"));
    CHECK_FALSE(contains(name, ".tmp-"));
  }
}

// The report of `chain` written into a fresh directory, as a reader sees it.
std::map<std::string, std::string> reference_report(const TempDir& dir, const fs::path& chain, const std::string& tag) {
  const fs::path out = dir.path / tag;
  const auto r = run({"report", chain.string(), "--out", out.string()});
  REQUIRE_MESSAGE(r.status == 0, r.err);
  return shown(out);
}

// A tmpfs of `bytes` mounted at `at` for the life of the object; `mounted` false when the
// platform does not allow it (not root, no mount permission in a container).
struct Tmpfs {
  fs::path at;
  bool mounted = false;
  Tmpfs(const fs::path& where, size_t bytes) : at(where) {
    fs::create_directories(at);
    const std::string options = "size=" + std::to_string(bytes);
    mounted = ::mount("tmpfs", at.c_str(), "tmpfs", 0, options.c_str()) == 0;
  }
  bool remount_read_only() const {
    return ::mount("tmpfs", at.c_str(), "tmpfs", MS_REMOUNT | MS_RDONLY, nullptr) == 0;
  }
  ~Tmpfs() {
    if (mounted) ::umount2(at.c_str(), MNT_DETACH);
  }
  Tmpfs(const Tmpfs&) = delete;
  Tmpfs& operator=(const Tmpfs&) = delete;
};

// Checks the CLI's answer to an output it cannot write: exit 4, nothing on stdout, one line
// naming `path` and the system's `reason`.
void check_cannot_write(const CliRun& r, const fs::path& path, const std::string& reason) {
  INFO("stderr: " << r.err);
  CHECK(r.status == 4);  // docs/output.md as extended: 4 = cannot write output
  CHECK(r.out.empty());
  CHECK(r.err.starts_with(path.string() + ": error: cannot write: " + reason));
  CHECK_FALSE(contains(r.err, "internal error"));
}

// The six-stage chain with every kind left open as well: a plan of several seconds.
std::string long_plan_chain() {
  std::string text = kSixOpenStages;
  for (const std::string kind : {"\"tcoil\"", "\"shunt\""})
    for (size_t at; (at = text.find("kind = " + kind)) != std::string::npos;)
      text.replace(at, 7 + kind.size(), "kind = \"auto\"");
  return text;
}

}  // namespace

TEST_CASE("outputs: plan --write to a place that cannot take it exits 4 with the path and the reason") {
  TempDir dir("peakplan_outputs");
  const std::string chain = kPlanned.string();
  SUBCASE("a missing directory") {
    const fs::path target = dir.path / "missing" / "planned.toml";
    check_cannot_write(run({"plan", chain, "--write", target.string()}), target, "No such file or directory");
    CHECK_FALSE(fs::exists(dir.path / "missing"));
  }
  SUBCASE("a parent that is a file") {
    write_file(dir.path / "file", "a file\n");
    const fs::path target = dir.path / "file" / "planned.toml";
    check_cannot_write(run({"plan", chain, "--write", target.string()}), target, "Not a directory");
    CHECK(read_file(dir.path / "file") == "a file\n");
  }
  SUBCASE("a directory in the way") {
    fs::create_directories(dir.path / "planned.toml");
    const fs::path target = dir.path / "planned.toml";
    check_cannot_write(run({"plan", chain, "--write", target.string()}), target, "Is a directory");
    CHECK(fs::is_empty(target));
  }
  SUBCASE("/proc, where no file can be made") {
    const fs::path target = "/proc/peakplan_planned.toml";
    const auto r = run({"plan", chain, "--write", target.string()});
    CHECK(r.status == 4);
    CHECK(r.err.starts_with(target.string() + ": error: cannot write: "));
  }
  SUBCASE("a file-size limit (RLIMIT_FSIZE) below the file's size") {
    write_file(dir.path / "planned.toml", "an earlier plan\n");
    const fs::path target = dir.path / "planned.toml";
    const auto r = run({"plan", chain, "--write", target.string()}, "/dev/null", [] {
      const rlimit limit{512, 512};  // bytes; the planned chain is several kB
      ::setrlimit(RLIMIT_FSIZE, &limit);
    });
    check_cannot_write(r, target, "File too large");
    CHECK(read_file(target) == "an earlier plan\n");
    std::set<std::string> names;
    for (const auto& e : fs::directory_iterator(dir.path)) names.insert(e.path().filename().string());
    CHECK(names == std::set<std::string>{"planned.toml"});  // the temporary file went too
  }
  SUBCASE("the planned chain itself, when the place is fine") {
    const fs::path target = dir.path / "planned.toml";
    const auto r = run({"plan", chain, "--write", target.string()});
    CHECK(r.status == 0);
    CHECK(read_file(target).starts_with("# Planned by peakplan"));
  }
}

TEST_CASE("outputs: report --out to a place that cannot take it exits 4 and leaves an older report whole") {
  TempDir dir("peakplan_outputs");
  SUBCASE("a parent that is a file") {
    write_file(dir.path / "file", "a file\n");
    const fs::path out = dir.path / "file" / "report";
    check_cannot_write(run({"report", kDemo.string(), "--out", out.string()}), out, "Not a directory");
  }
  SUBCASE("an --out that is a file") {
    write_file(dir.path / "report", "a file\n");
    const fs::path out = dir.path / "report";
    check_cannot_write(run({"report", kDemo.string(), "--out", out.string()}), out, "Not a directory");
    CHECK(read_file(out) == "a file\n");
  }
  SUBCASE("a directory where a report file goes") {
    const fs::path out = dir.path / "report";
    REQUIRE(run({"report", kFanout.string(), "--out", out.string()}).status == 0);
    const auto before = shown(out);
    fs::remove(out / "eye.svg");
    fs::create_directories(out / "eye.svg");
    check_cannot_write(run({"report", kDemo.string(), "--out", out.string()}), out / "eye.svg", "Is a directory");
    CHECK(shown(out, {"eye.svg"}) == before);
    CHECK(store_entries(out) == kFinishedStore);
  }
  SUBCASE("a read-only directory (chmod; root writes anyway, so only as another user)") {
    if (::geteuid() == 0) {
      MESSAGE("running as root, which chmod does not stop: the read-only tmpfs case below covers EROFS instead");
      return;
    }
    const fs::path out = dir.path / "report";
    const auto older = reference_report(dir, kFanout, "report");
    fs::permissions(out / ".peakplan", fs::perms::owner_read | fs::perms::owner_exec);
    const auto r = run({"report", kDemo.string(), "--out", out.string()});
    fs::permissions(out / ".peakplan", fs::perms::owner_all);
    CHECK(r.status == 4);
    CHECK(contains(r.err, ": error: cannot write: Permission denied"));
    CHECK(shown(out) == older);
  }
  SUBCASE("/proc") {
    const auto r = run({"report", kDemo.string(), "--out", "/proc/peakplan_report"});
    CHECK(r.status == 4);
    CHECK(r.err.starts_with("/proc/peakplan_report: error: cannot write: "));
  }
  SUBCASE("a file-size limit (RLIMIT_FSIZE) in the middle of the set") {
    const fs::path out = dir.path / "report";
    const auto older = reference_report(dir, kFanout, "report");
    const auto r = run({"report", kDemo.string(), "--out", out.string()}, "/dev/null", [] {
      const rlimit limit{20000, 20000};  // bytes: budget.md fits, the plots do not
      ::setrlimit(RLIMIT_FSIZE, &limit);
    });
    INFO("stderr: " << r.err);
    CHECK(r.status == 4);
    CHECK(contains(r.err, ": error: cannot write: File too large"));
    CHECK(shown(out) == older);
    CHECK(store_entries(out) == kFinishedStore);  // the partial version was removed
  }
  SUBCASE("a file-size limit on a report into a new directory leaves no directory") {
    const fs::path out = dir.path / "new" / "report";
    const auto r = run({"report", kDemo.string(), "--out", out.string()}, "/dev/null", [] {
      const rlimit limit{20000, 20000};
      ::setrlimit(RLIMIT_FSIZE, &limit);
    });
    CHECK(r.status == 4);
    CHECK_FALSE(fs::exists(out));
  }
}

TEST_CASE("outputs: a full, a read-only and an immutable file system exit 4 and leave the older report whole") {
  TempDir dir("peakplan_outputs");
  const Tmpfs disk(dir.path / "disk", 2u << 20);
  if (!disk.mounted) {
    MESSAGE("cannot mount a tmpfs here (needs root and mount permission): full and read-only disk checks skipped");
    return;
  }
  const fs::path out = disk.at / "report";
  const auto older = reference_report(dir, kFanout, "older");
  const auto newer = reference_report(dir, kDemo, "newer");
  REQUIRE(run({"report", kFanout.string(), "--out", out.string()}).status == 0);
  REQUIRE(shown(out) == older);
  write_file(out / "notes.txt", "the designer's notes\n");

  SUBCASE("a full disk (ENOSPC)") {
    // Room for half the new report beside the old one.
    size_t new_size = 0;
    for (const auto& [name, text] : newer) new_size += text.size();
    struct statvfs fs_stat {};
    REQUIRE(::statvfs(disk.at.c_str(), &fs_stat) == 0);
    const size_t free_bytes = static_cast<size_t>(fs_stat.f_bavail) * fs_stat.f_frsize;
    REQUIRE(free_bytes > new_size);
    write_file(disk.at / "filler", std::string(free_bytes - new_size / 2, 'f'));
    const auto r = run({"report", kDemo.string(), "--out", out.string()});
    INFO("stderr: " << r.err);
    CHECK(r.status == 4);
    CHECK(contains(r.err, ": error: cannot write: No space left on device"));
    CHECK(shown(out) == older);
    CHECK(store_entries(out) == kFinishedStore);
    fs::remove(disk.at / "filler");
    const auto again = run({"report", kDemo.string(), "--out", out.string()});  // room again: it works
    CHECK(again.status == 0);
    CHECK(shown(out) == newer);
    CHECK(store_entries(out) == kFinishedStore);
  }
  SUBCASE("a read-only file system (EROFS)") {
    if (!disk.remount_read_only()) {
      MESSAGE("cannot remount the tmpfs read-only here: check skipped");
      return;
    }
    check_cannot_write(run({"report", kDemo.string(), "--out", out.string()}), out, "Read-only file system");
    check_cannot_write(run({"plan", kPlanned.string(), "--write", (disk.at / "p.toml").string()}),
                       disk.at / "p.toml", "Read-only file system");
    CHECK(shown(out) == older);
  }
  SUBCASE("an immutable directory (chattr +i)") {
    const std::string chattr = find_on_path("chattr");
    if (chattr.empty() || run_shell(shell_quoted(chattr) + " +i " + shell_quoted((out / ".peakplan").string())) != 0) {
      MESSAGE("chattr +i is not available here: check skipped");
      return;
    }
    const auto r = run({"report", kDemo.string(), "--out", out.string()});
    run_shell(shell_quoted(chattr) + " -i " + shell_quoted((out / ".peakplan").string()));
    INFO("stderr: " << r.err);
    CHECK(r.status == 4);
    CHECK(contains(r.err, ": error: cannot write: Operation not permitted"));
    CHECK(shown(out) == older);
  }
  CHECK(read_file(out / "notes.txt") == "the designer's notes\n");
}

TEST_CASE("outputs: a report over one by an older peakplan (plain files) is taken over whole") {
  TempDir dir("peakplan_outputs");
  const fs::path out = dir.path / "report";
  fs::create_directories(out);
  write_file(out / "index.html", "<html>an earlier page</html>\n");
  write_file(out / "result.json.peakplan-tmp", "{\"half\": ");  // a killed run of peakplan 0.1
  write_file(out / "notes.txt", "notes\n");
  const auto expected = reference_report(dir, kDemo, "fresh");
  const auto r = run({"report", kDemo.string(), "--out", out.string()});
  REQUIRE_MESSAGE(r.status == 0, r.err);
  CHECK(shown(out) == expected);
  CHECK(read_file(out / "notes.txt") == "notes\n");
  CHECK(store_entries(out) == kFinishedStore);
  CHECK(fs::is_symlink(out / "index.html"));
  CHECK(fs::read_symlink(out / "index.html") == ".peakplan/current/index.html");  // relative: DIR may move
  check_no_temporaries(out);
  // The directory moved elsewhere still shows the report.
  fs::rename(out, dir.path / "moved");
  CHECK(shown(dir.path / "moved") == expected);
}

TEST_CASE("outputs: a report killed at random moments leaves the old set or the new set, never a mix") {
  TempDir dir("peakplan_outputs");
  // Two reports with different contents and different names (only the demo has eye.svg).
  const auto a = reference_report(dir, kDemo, "a");
  const auto b = reference_report(dir, kFanout, "b");
  REQUIRE(a != b);
  check_complete(a);
  check_complete(b);
  const fs::path out = dir.path / "report";
  REQUIRE(run({"report", kDemo.string(), "--out", out.string()}).status == 0);
  write_file(out / "notes.txt", "notes\n");
  bool holds_a = true;

  // How long a whole report takes here; the kill delay then adapts, so that most kills land
  // near the writing (later after a kill that came too early, earlier after one too late).
  const auto started = std::chrono::steady_clock::now();
  REQUIRE(run({"report", kFanout.string(), "--out", (dir.path / "timing").string()}).status == 0);
  double delay_us = std::chrono::duration<double, std::micro>(std::chrono::steady_clock::now() - started).count();
  std::mt19937 random(20261202);
  int kept_old = 0, took_new = 0, mid_write = 0;
  constexpr int kKills = 60;
  for (int kill = 0; kill < kKills; ++kill) {
    TempDir capture("peakplan_outputs_kill");
    const fs::path& next = holds_a ? kFanout : kDemo;
    const Child child = spawn(capture, {"report", next.string(), "--out", out.string()});
    const double jitter = std::uniform_real_distribution<double>(0.5, 1.5)(random);
    std::this_thread::sleep_for(std::chrono::microseconds(static_cast<long>(delay_us * jitter)));
    ::kill(child.pid, SIGKILL);
    wait_for(child);

    const auto now = shown(out);
    INFO("kill " << kill << " after " << delay_us * jitter << " us");
    const bool is_a = now == a, is_b = now == b;
    CHECK((is_a || is_b));  // a whole set, byte for byte
    check_complete(now);
    CHECK(read_file(out / "notes.txt") == "notes\n");
    const bool changed = holds_a ? is_b : is_a;
    if (store_entries(out) != kFinishedStore) ++mid_write;
    if (changed) {
      ++took_new;
      delay_us *= 0.8;
    } else {
      ++kept_old;
      delay_us *= 1.25;
    }
    holds_a = is_a;
  }
  MESSAGE(kKills << " kills: " << kept_old << " left the old set, " << took_new << " the new one; " << mid_write
                 << " came while a version was being written or retired");

  // The next run removes whatever the killed ones left.
  const auto r = run({"report", kDemo.string(), "--out", out.string()});
  REQUIRE_MESSAGE(r.status == 0, r.err);
  CHECK(shown(out) == a);
  CHECK(store_entries(out) == kFinishedStore);
  check_no_temporaries(out);
}

TEST_CASE("outputs: plan --write killed at random moments leaves the old file or the new one") {
  TempDir dir("peakplan_outputs");
  const fs::path target = dir.path / "planned.toml";
  REQUIRE(run({"plan", kPlanned.string(), "--write", (dir.path / "reference.toml").string()}).status == 0);
  const std::string planned = read_file(dir.path / "reference.toml");
  const std::string older = "# an earlier plan\n";
  const auto started = std::chrono::steady_clock::now();
  write_file(target, older);
  REQUIRE(run({"plan", kPlanned.string(), "--write", target.string()}).status == 0);
  double delay_us = std::chrono::duration<double, std::micro>(std::chrono::steady_clock::now() - started).count();
  std::mt19937 random(7);
  for (int kill = 0; kill < 20; ++kill) {
    write_file(target, older);
    TempDir capture("peakplan_outputs_kill");
    const Child child = spawn(capture, {"plan", kPlanned.string(), "--write", target.string()});
    std::this_thread::sleep_for(std::chrono::microseconds(
        static_cast<long>(delay_us * std::uniform_real_distribution<double>(0.5, 1.5)(random))));
    ::kill(child.pid, SIGKILL);
    wait_for(child);
    const std::string now = read_file(target);
    CHECK((now == older || now == planned));
    delay_us *= now == planned ? 0.8 : 1.25;
  }
  REQUIRE(run({"plan", kPlanned.string(), "--write", target.string()}).status == 0);
  std::set<std::string> names;
  for (const auto& e : fs::directory_iterator(dir.path)) names.insert(e.path().filename().string());
  CHECK(names == std::set<std::string>{"planned.toml", "reference.toml"});  // no temporary name survives
}

TEST_CASE("outputs: SIGINT and SIGTERM stop a long plan with 130 and 143, and nothing is written") {
  TempDir dir("peakplan_outputs");
  const std::string chain = dir.write("long_plan.toml", long_plan_chain());
  for (const auto& [sig, status, word] :
       {std::tuple{SIGINT, 130, "interrupted (SIGINT)"}, std::tuple{SIGTERM, 143, "terminated (SIGTERM)"}}) {
    CAPTURE(sig);
    {  // plan --write
      TempDir capture("peakplan_outputs_signal"), place("peakplan_outputs_place");
      const fs::path target = place.path / "planned.toml";
      const Child child = spawn(capture, {"plan", chain, "--write", target.string()});
      std::this_thread::sleep_for(std::chrono::milliseconds(500));
      ::kill(child.pid, sig);
      CHECK(wait_for(child, std::chrono::seconds(10)) == status);  // 128 + signal: common practice
      CHECK(read_file(child.out).empty());
      CHECK(contains(read_file(child.err), word));
      CHECK_FALSE(fs::exists(target));
      CHECK(fs::is_empty(place.path));  // no temporary file either
    }
    {  // report --plan over an older report
      const fs::path out = dir.path / "report";
      const auto older = reference_report(dir, kFanout, "report");
      TempDir capture("peakplan_outputs_signal");
      const Child child = spawn(capture, {"report", chain, "--plan", "--out", out.string()});
      std::this_thread::sleep_for(std::chrono::milliseconds(500));
      ::kill(child.pid, sig);
      CHECK(wait_for(child, std::chrono::seconds(10)) == status);
      CHECK(read_file(child.out).empty());
      CHECK(shown(out) == older);
      CHECK(store_entries(out) == kFinishedStore);
    }
  }
}

TEST_CASE("outputs: SIGTERM during a long analysis, which polls no flag, still ends it with 143") {
  // 256 shunt stages with a PRBS15 eye: over a second of analysis on the development machine.
  std::string text = "[signal]\nbit_rate = \"56 Gb/s\"\npattern = \"prbs15\"\n";
  for (int i = 0; i < 4; ++i)
    text += "[[stage]]\nid = \"g" + std::to_string(i) +
            "\"\nkind = \"shunt\"\ngm = \"40 mS\"\nrd = \"25 ohm\"\nc_in = \"20 fF\"\nc_out = \"10 fF\"\nm = 0.3\n"
            "count = 64\n";
  TempDir dir("peakplan_outputs"), capture("peakplan_outputs_signal");
  const std::string chain = dir.write("long_analysis.toml", text);
  const Child child = spawn(capture, {"analyze", chain, "--json"});
  std::this_thread::sleep_for(std::chrono::milliseconds(200));
  ::kill(child.pid, SIGTERM);
  CHECK(wait_for(child, std::chrono::seconds(10)) == 143);  // 128 + SIGTERM: common practice
  CHECK(read_file(child.out).empty());
}

TEST_CASE("outputs: a chain file of - is standard input, and its errors name <stdin>") {
  TempDir dir("peakplan_outputs");
  const auto from_file = run({"analyze", kDemo.string(), "--json"});
  const auto from_stdin = run({"analyze", "-", "--json"}, kDemo);
  REQUIRE(from_file.status == 0);
  CHECK(from_stdin.status == 0);
  CHECK(from_stdin.out == from_file.out);

  // report reads the chain twice (the spec and the text the page echoes): one read of stdin serves both.
  const auto report = run({"report", "-", "--out", (dir.path / "r").string()}, kDemo);
  CHECK(report.status == 0);
  CHECK(contains(read_file(dir.path / "r" / "index.html"), "&lt;stdin&gt;"));

  std::string text = read_file(kDemo);
  const auto at = text.find("rd = \"95 ohm\"");
  REQUIRE(at != std::string::npos);
  text.replace(at, 13, "rd = \"95 ohx\"");
  const std::string bad = dir.write("bad.toml", text);
  const auto from_bad_file = run({"analyze", bad});
  const auto from_bad_stdin = run({"analyze", "-"}, bad);
  CHECK(from_bad_stdin.status == 2);
  CHECK(from_bad_stdin.out.empty());
  CHECK(from_bad_stdin.err.starts_with("<stdin>:38:6: error: stage 'a2': rd"));  // line and column of the value
  CHECK(from_bad_stdin.err.substr(7) == from_bad_file.err.substr(bad.size()));  // the same message otherwise
}

TEST_CASE("outputs: a directory, an empty, a binary or an oversized chain file is a positioned error, exit 2") {
  TempDir dir("peakplan_outputs");
  const auto check_bad = [](const CliRun& r, const std::string& prefix, const std::string& fragment) {
    INFO("stderr: " << r.err);
    CHECK(r.status == 2);
    CHECK(r.out.empty());
    CHECK(r.err.starts_with(prefix));
    CHECK(contains(r.err, fragment));
  };
  SUBCASE("a directory") {
    check_bad(run({"analyze", dir.path.string()}), dir.path.string() + ": error: ", "is a directory");
  }
  SUBCASE("an empty file") {
    const auto path = dir.write("empty.toml", "");
    check_bad(run({"analyze", path}), path + ":1:1: error: ", "the chain file is empty");
  }
  SUBCASE("an empty standard input") {
    check_bad(run({"analyze", "-"}), "<stdin>:1:1: error: ", "the chain file is empty");
  }
  SUBCASE("a binary file") {
    const auto path = dir.write("binary.toml", std::string("\x89PNG\r\n\x1a\n\0\0", 10));
    check_bad(run({"analyze", path}), path + ":1:1: error: ", "byte 0x89 is not UTF-8");
    const auto nul = dir.write("nul.toml", std::string("[chain]\nname = \"x\0\"\n", 20));
    check_bad(run({"analyze", nul}), nul + ":2:10: error: ", "a NUL byte");
  }
  SUBCASE("a 50 MB file, read no further than the 4 MiB limit") {
    const auto path = dir.write("huge.toml", std::string(50u << 20, '#'));
    check_bad(run({"analyze", path}), path + ":1:4194305: error: ", "larger than the limit of 4194304 bytes");
  }
  SUBCASE("/dev/zero, which never ends") {
    check_bad(run({"analyze", "/dev/zero"}), "/dev/zero:1:1: error: ", "a NUL byte");
  }
  SUBCASE("a 200 kB dotted key (once a stack overflow in the TOML reader)") {
    std::string key;
    for (int i = 0; i < 100000; ++i) key += "a.";
    const auto path = dir.write("deep.toml", "# deep\n" + key + "a = 1\n");
    check_bad(run({"analyze", path}), path + ":2:66: error: ", "nested deeper than the limit of 32 levels");
    check_bad(run({"analyze", "-"}, path), "<stdin>:2:66: error: ", "nested deeper than the limit of 32 levels");
  }
  SUBCASE("a deep --set value is a string, not a crash") {
    std::string value;
    for (int i = 0; i < 30000; ++i) value += "{a=";  // 90 kB: one argument may hold 128 kB
    const auto r = run({"analyze", kDemo.string(), "--set", "a1.rd=" + value});
    CHECK(r.status == 2);
    CHECK(r.err.starts_with("--set a1.rd="));
  }
}
