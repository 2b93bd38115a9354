// libFuzzer target: `--set` texts (one per line of the input, ID.KEY=VALUE) applied to a fixed
// valid chain (peakplan::fuzz::fixed_chain), through everything `peakplan analyze --json
// --set ...` does. Build: -DPEAKPLAN_FUZZ=ON with clang; run: .ci/fuzz.
#include <cstddef>
#include <cstdint>
#include <string_view>

#include "fuzz_report.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  const auto sets = peakplan::fuzz::sets_from_input(std::string_view(reinterpret_cast<const char*>(data), size));
  peakplan::fuzz::run_or_abort([&] { return peakplan::fuzz::analyze_chain_text(peakplan::fuzz::fixed_chain(), sets); });
  return 0;
}
