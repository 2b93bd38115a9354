// Reading a chain file's text, and the bounds any chain text must keep before it is parsed,
// so that no input costs more than a moment or crashes the TOML reader:
//   - a path of "-" is standard input (read once; errors name "<stdin>", diagnostics.hpp);
//   - a directory, an empty file, a binary file (a NUL byte), bytes that are not UTF-8 and a
//     file over kMaxChainBytes are each a positioned error, never a parse attempt;
//   - nesting deeper than kMaxNesting (open [ and {, plus the dotted parts of a key) is an
//     error found by a scan of the text before TOML++ parses it: its parser recurses per level,
//     and a 200 kB dotted key `a.a.a...` overflows the stack.
// The limits on stages and counts are the chain-file reader's (planner/input/chain_file.hpp).
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>

#include "planner/input/diagnostics.hpp"

namespace peakplan {

inline constexpr size_t kMaxChainBytes = size_t{4} << 20;  // 4 MiB; a chain file is a few kB
inline constexpr size_t kMaxNesting = 32;                  // a chain file needs 3

// The file read whole; nullopt (reported, with the position where it applies) when it cannot
// be read or is not chain text by the rules above.
std::optional<std::string> read_chain_text(const std::string& path, Diagnostics& diagnostics);
// The same checks of text already in memory (empty, binary, not UTF-8, over kMaxChainBytes);
// false, reported, when it is not chain text. The fuzz targets (tests/fuzz/) read no files.
bool check_chain_text(std::string_view text, Diagnostics& diagnostics);

// The byte offset of the first NUL byte or byte that is not UTF-8 in `text`, or nullopt (a
// --set text is checked so before it is parsed: TOML++ rejects such bytes inside a string).
std::optional<size_t> not_text_at(std::string_view text);

// The byte offset where `text` first nests deeper than kMaxNesting, or nullopt.
std::optional<size_t> too_deep_at(std::string_view text);
// Reports (and returns false for) text nested deeper than kMaxNesting, at that place.
bool check_nesting(std::string_view text, Diagnostics& diagnostics);

}  // namespace peakplan
