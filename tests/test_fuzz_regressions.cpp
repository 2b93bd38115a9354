// The fuzz regression corpus (tests/fuzz/regressions/) in the ordinary suite: every input a
// fuzz target ever found failing (.ci/fuzz copies each into the corpus) is run through the same
// in-process path as the fuzzers (tests/fuzz/chain_path.hpp) and through the real executable.
// Each must end in positioned, exit-2 diagnostics or a clean analysis: never an exception (exit 3).
//   regressions/chain/*  a chain file's bytes (fuzz_chain)
//   regressions/set/*    --set texts, one per line, applied to fixed_chain() (fuzz_set)
#include <doctest/doctest.h>

#include <algorithm>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <regex>
#include <string>
#include <vector>

#include "cli_support.hpp"
#include "fuzz/chain_path.hpp"

namespace fs = std::filesystem;
using namespace peakplan::test;

namespace {

const fs::path kRegressions = fs::path(PEAKPLAN_SOURCE_DIR) / "tests" / "fuzz" / "regressions";

std::vector<fs::path> files_in(const fs::path& dir) {
  std::vector<fs::path> files;
  for (const auto& e : fs::directory_iterator(dir))
    if (e.is_regular_file()) files.push_back(e.path());
  std::sort(files.begin(), files.end());
  return files;
}

// Exit-2 diagnostics (docs/chain-format.md): file:line:col: error: ..., a whole-file error
// without a position, or one naming the --set option that caused it.
void check_diagnostics(const peakplan::fuzz::PathResult& result, const std::string& name) {
  REQUIRE_FALSE(result.errors.empty());
  const std::regex shape("^(" + std::regex_replace(name, std::regex(R"([.^$|()\[\]{}*+?\\])"), R"(\$&)") +
                         R"((:[0-9]+:[0-9]+)?|--set [\s\S]*): error: [\s\S]+$)");
  for (const auto& e : result.errors) {
    const auto line = e.format();
    INFO("diagnostic: " << line);
    CHECK(std::regex_match(line, shape));
  }
}

void check_clean_analysis(const peakplan::fuzz::PathResult& result) {
  const auto doc = nlohmann::json::parse(result.json);
  CHECK(doc.contains("outputs"));
  CHECK_FALSE(doc["outputs"].empty());
}

std::vector<std::string> set_arguments(const std::vector<std::string>& sets) {
  std::vector<std::string> args;
  for (const auto& s : sets) args.insert(args.end(), {"--set", s});
  return args;
}

}  // namespace

TEST_CASE("fuzz regressions: every chain-file input the fuzzer found ends in positioned errors or a clean analysis, "
          "never an internal error") {
  const auto files = files_in(kRegressions / "chain");
  REQUIRE_FALSE(files.empty());
  for (const auto& path : files) {
    INFO("regression: " << path.string());
    const std::string text = read_file(path);
    peakplan::fuzz::PathResult result;
    REQUIRE_NOTHROW(result = peakplan::fuzz::analyze_chain_text(text, {}, path.string()));
    if (result.analysed)
      check_clean_analysis(result);
    else
      check_diagnostics(result, path.string());
    // The executable agrees: exit 0 with JSON, or exit 2 with nothing on stdout; never 3.
    const CliRun run = run_cli({"analyze", path.string(), "--json"});
    INFO("stderr: " << run.err);
    CHECK(run.status == (result.analysed ? 0 : 2));
    if (!result.analysed) CHECK(run.out.empty());
  }
}

TEST_CASE("fuzz regressions: every --set input the fuzzer found ends in errors naming the file or the option, or "
          "a clean analysis") {
  const auto files = files_in(kRegressions / "set");
  REQUIRE_FALSE(files.empty());
  TempDir dir("peakplan_fuzz_set");
  const std::string chain = dir.write("fixed.toml", std::string(peakplan::fuzz::fixed_chain()));
  for (const auto& path : files) {
    INFO("regression: " << path.string());
    const auto sets = peakplan::fuzz::sets_from_input(read_file(path));
    peakplan::fuzz::PathResult result;
    REQUIRE_NOTHROW(result = peakplan::fuzz::analyze_chain_text(peakplan::fuzz::fixed_chain(), sets, chain));
    if (result.analysed)
      check_clean_analysis(result);
    else
      check_diagnostics(result, chain);
    std::vector<std::string> args{"analyze", chain, "--json"};
    const auto more = set_arguments(sets);
    args.insert(args.end(), more.begin(), more.end());
    const CliRun run = run_cli(args);
    INFO("stderr: " << run.err);
    CHECK(run.status == (result.analysed ? 0 : 2));
  }
}

TEST_CASE("fuzz path: the fixed --set chain and every shipped chain without open values analyse cleanly; a bad "
          "fixture gives its positioned error") {
  // A control: a path that reported everything as bad input would pass the regression cases.
  CHECK(peakplan::fuzz::analyze_chain_text(peakplan::fuzz::fixed_chain()).analysed);
  const auto demo = fs::path(PEAKPLAN_SOURCE_DIR) / "chains" / "demo_postamp.toml";
  const auto result = peakplan::fuzz::analyze_chain_text(read_file(demo), {}, demo.string());
  REQUIRE(result.analysed);
  check_clean_analysis(result);

  const auto bad = fs::path(PEAKPLAN_SOURCE_DIR) / "tests" / "bad_chains" / "k_out_of_range.toml";
  const auto failed = peakplan::fuzz::analyze_chain_text(read_file(bad), {}, bad.string());
  REQUIRE_FALSE(failed.analysed);
  REQUIRE(failed.errors.size() == 1);
  CHECK(failed.errors[0].where.line == 9);  // as tests/test_chain_file_errors.cpp asserts it
  CHECK(failed.errors[0].where.column == 5);

  // --set texts, one per line, at most kMaxSets of them.
  CHECK(peakplan::fuzz::sets_from_input("a.b=1\nc.d=2") == std::vector<std::string>{"a.b=1", "c.d=2"});
  CHECK(peakplan::fuzz::sets_from_input(std::string(20, '\n')).size() == peakplan::fuzz::kMaxSets);
}
