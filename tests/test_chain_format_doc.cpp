// The format reference in the repository (docs/chain-format.md) against the loader's own key
// tables: every key the loader accepts is documented under its table, and every documented key
// is one the loader accepts, so the page cannot fall behind the code or run ahead of it.
#include <doctest/doctest.h>

#include <filesystem>
#include <map>
#include <regex>
#include <set>
#include <sstream>
#include <string>

#include "cli_support.hpp"
#include "planner/input/chain_file.hpp"

namespace {

// Table name -> the keys in the first column of the Markdown tables under its "## [name]"
// (or "## [[name]]") heading, up to the next "## " or "### " heading.
std::map<std::string, std::set<std::string>> documented_keys(const std::string& page) {
  std::map<std::string, std::set<std::string>> keys;
  const std::regex heading(R"(^## \[\[?([a-z_.]+)\]\]?\s*$)");
  const std::regex row(R"(^\| `([a-z_0-9]+)` \|)");
  std::istringstream in(page);
  std::string current;
  for (std::string line; std::getline(in, line);) {
    std::smatch m;
    if (line.rfind("### ", 0) == 0) {
      current.clear();  // a subsection (the kinds, say) holds no keys of the table
    } else if (line.rfind("## ", 0) == 0) {
      current = std::regex_match(line, m, heading) ? m[1].str() : "";
      if (!current.empty()) keys[current];
    } else if (!current.empty() && std::regex_search(line, m, row)) {
      keys[current].insert(m[1].str());
    }
  }
  return keys;
}

}  // namespace

TEST_CASE("chain format: docs/chain-format.md lists exactly the tables and keys the loader accepts") {
  const auto page = peakplan::test::read_file(std::filesystem::path(PEAKPLAN_SOURCE_DIR) / "docs" / "chain-format.md");
  const auto documented = documented_keys(page);
  std::set<std::string> loader_tables;
  for (const auto& table : peakplan::chain_file_tables()) {
    const std::string name(table.name);
    loader_tables.insert(name);
    INFO("table: " << name);
    REQUIRE(documented.count(name) == 1);
    std::set<std::string> accepted(table.keys.begin(), table.keys.end());
    for (const auto& key : accepted) {
      INFO("key the loader accepts: " << key);
      CHECK(documented.at(name).count(key) == 1);
    }
    for (const auto& key : documented.at(name)) {
      INFO("key the page documents: " << key);
      CHECK(accepted.count(key) == 1);
    }
  }
  std::set<std::string> page_tables;
  for (const auto& [name, _] : documented) page_tables.insert(name);
  CHECK(page_tables == loader_tables);
}

TEST_CASE("chain format: the README points to the format reference in the repository, not outside it") {
  const auto readme = peakplan::test::read_file(std::filesystem::path(PEAKPLAN_SOURCE_DIR) / "README.md");
  CHECK(readme.find("docs/chain-format.md") != std::string::npos);
  CHECK(readme.find("DESIGN.md") == std::string::npos);
}

TEST_CASE("chain format: the code cites the documents in the repository, never notes kept outside it") {
  namespace fs = std::filesystem;
  const fs::path root = PEAKPLAN_SOURCE_DIR;
  for (const auto* doc : {"docs/physics.md", "docs/references.md", "docs/output.md", "docs/architecture.md"})
    CHECK_MESSAGE(fs::exists(root / doc), doc);
  for (const auto* dir : {"models", "planner", "reports"})
    for (const auto& e : fs::recursive_directory_iterator(root / dir)) {
      if (!e.is_regular_file()) continue;
      const auto text = peakplan::test::read_file(e.path());
      CHECK_MESSAGE(text.find("DESIGN.md") == std::string::npos, e.path().string());
      CHECK_MESSAGE(text.find("REFERENCES.md") == std::string::npos, e.path().string());
    }
}
