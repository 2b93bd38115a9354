#include "planner/commands/command.hpp"

#include <cstdio>
#include <filesystem>
#include <fstream>

namespace peakplan::cli {

void print(const std::string& text) {
  std::fwrite(text.data(), 1, text.size(), stdout);
  std::fflush(stdout);
}

bool write_whole_file(const std::string& path, const std::string& text, std::string& error) {
  const std::filesystem::path target(path);
  auto temporary = target;
  temporary += ".peakplan-tmp";
  {
    std::ofstream out(temporary, std::ios::binary | std::ios::trunc);
    out << text;
    out.close();
    if (!out) {
      error = "cannot write " + temporary.string();
      std::filesystem::remove(temporary);
      return false;
    }
  }
  std::error_code ec;
  std::filesystem::rename(temporary, target, ec);
  if (ec) {
    error = "cannot rename " + temporary.string() + " to " + path + ": " + ec.message();
    std::filesystem::remove(temporary);
    return false;
  }
  return true;
}

bool same_file(const std::string& output, const std::string& input) {
  std::error_code ec;
  return std::filesystem::exists(output, ec) && std::filesystem::equivalent(output, input, ec);
}

}  // namespace peakplan::cli
