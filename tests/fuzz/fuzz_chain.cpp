// libFuzzer target: any bytes as a chain file, through everything `peakplan analyze --json`
// does (tests/fuzz/chain_path.hpp). Build: -DPEAKPLAN_FUZZ=ON with clang; run: .ci/fuzz.
#include <cstddef>
#include <cstdint>
#include <string_view>

#include "fuzz_report.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  peakplan::fuzz::run_or_abort([&] { return peakplan::fuzz::analyze_chain_text(text); });
  return 0;
}
