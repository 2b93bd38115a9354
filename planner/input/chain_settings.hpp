// The settings two chain files differ in, as written. compare lists them beside the metrics so
// that no input difference (an r_source, a swing, a limit, a modulation) hides behind the
// figures it moved: every key of every top-level table ([input], [signal], [technology],
// [target], [limits], [variation] and any nested table), and every key of the [[stage]] tables
// matched by id. Values are shown as TOML text as the files give them (a float to 9 digits); a
// value written with its unit in one file and as a number in the other ("50 ohm" and 50) is no
// difference, nor is a default one file writes out and the other leaves (a written plan writes
// r_source, gamma, temperature, modulation, pattern, target_ber, objective and coil losses).
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace peakplan {

struct SettingDifference {
  std::string key;               // "input.r_source", "signal.modulation", "stage g1.c_in"
  std::optional<std::string> a;  // nullopt: the key is not in that file (its default applies)
  std::optional<std::string> b;
};

// Both texts must be valid TOML (they were read as chain files first); a text that does not
// parse contributes no keys. In the order of file A, then keys only in B.
std::vector<SettingDifference> setting_differences(std::string_view text_a, std::string_view text_b);

// True when a difference concerns the [signal] table: the two eyes are then not comparable.
bool is_signal_setting(const SettingDifference& difference);

}  // namespace peakplan
