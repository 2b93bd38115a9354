// Helpers for the tests that drive the real executable and real directories: run the CLI with
// its output captured, a temporary directory that removes itself, whole-file reads and writes,
// and a directory's files with their contents. Failures are doctest REQUIREs, so a fixture
// that cannot be set up stops its test case with the path in the message.
#pragma once

#include <doctest/doctest.h>

#include <sys/wait.h>
#include <unistd.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>
#include <string>
#include <system_error>
#include <vector>

namespace peakplan::test {

// The text of a file, byte for byte.
inline std::string read_file(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  REQUIRE_MESSAGE(in, "cannot read " << path.string());
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

// Replaces the whole file with `text`.
inline void write_file(const std::filesystem::path& path, const std::string& text) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out << text;
  REQUIRE_MESSAGE(out, "cannot write " << path.string());
}

// One word for /bin/sh, whatever it holds.
inline std::string shell_quoted(const std::string& s) {
  std::string out = "'";
  for (char c : s) out += c == '\'' ? std::string("'\\''") : std::string(1, c);
  return out + "'";
}

// The exit status of a shell command; -1 when it did not exit normally.
inline int run_shell(const std::string& command) {
  const int raw = std::system(command.c_str());
  return raw != -1 && WIFEXITED(raw) ? WEXITSTATUS(raw) : -1;
}

// The first executable `program` on PATH, or "" when there is none.
inline std::string find_on_path(const std::string& program) {
  const char* path = std::getenv("PATH");
  std::stringstream dirs(path ? path : "");
  for (std::string dir; std::getline(dirs, dir, ':');) {
    const std::filesystem::path candidate = std::filesystem::path(dir.empty() ? "." : dir) / program;
    if (std::filesystem::is_regular_file(candidate) && ::access(candidate.c_str(), X_OK) == 0)
      return candidate.string();
  }
  return {};
}

// A fresh directory under the system's temporary directory (named after `tag`), removed with
// everything in it when the object goes.
struct TempDir {
  std::filesystem::path path;
  explicit TempDir(const std::string& tag = "peakplan_test") {
    std::string name = (std::filesystem::temp_directory_path() / (tag + "_XXXXXX")).string();
    REQUIRE(::mkdtemp(name.data()) != nullptr);
    path = name;
  }
  ~TempDir() {
    std::error_code ec;
    std::filesystem::remove_all(path, ec);
  }
  TempDir(const TempDir&) = delete;
  TempDir& operator=(const TempDir&) = delete;

  // Writes `name` in this directory and returns its path as text, ready to be a CLI argument.
  std::string write(const std::string& name, const std::string& text) const {
    write_file(path / name, text);
    return (path / name).string();
  }
};

struct CliRun {
  int status = -1;  // exit status; -1 when the process did not exit normally
  std::string out, err;
};

// Runs the peakplan executable with `args` (each one word) and stdout and stderr sent to files
// in a directory of its own, so that "nothing on stdout" is a file of zero bytes that we
// created, not a capture that silently failed. `working_directory` ("" for the test's own) is
// where relative paths in `args` are read from.
inline CliRun run_cli(const std::vector<std::string>& args, const std::string& working_directory = "") {
  TempDir capture("peakplan_cli");
  const auto out = capture.path / "stdout", err = capture.path / "stderr";
  std::string command = working_directory.empty() ? "" : "cd " + shell_quoted(working_directory) + " && ";
  command += shell_quoted(PEAKPLAN_BINARY);
  for (const auto& a : args) command += " " + shell_quoted(a);
  command += " >" + shell_quoted(out.string()) + " 2>" + shell_quoted(err.string());
  CliRun run;
  run.status = run_shell(command);
  REQUIRE_MESSAGE(std::filesystem::exists(out), "the shell did not create the stdout file: " << command);
  run.out = read_file(out);
  run.err = read_file(err);
  return run;
}

// Every regular file below `dir` by relative path, with its contents.
inline std::map<std::string, std::string> files_below(const std::filesystem::path& dir) {
  std::map<std::string, std::string> files;
  for (const auto& e : std::filesystem::recursive_directory_iterator(dir))
    if (e.is_regular_file()) files[std::filesystem::relative(e.path(), dir).string()] = read_file(e.path());
  return files;
}

}  // namespace peakplan::test
