#include "planner/input/chain_input.hpp"

#include <fcntl.h>
#include <fmt/format.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <vector>

namespace peakplan {
namespace {

// Line and column (1-based, columns in characters) of byte `offset` of `text`, which is valid
// UTF-8 before it.
SourcePosition position_of(std::string_view text, size_t offset) {
  int line = 1, column = 1;
  for (size_t i = 0; i < offset && i < text.size(); ++i) {
    const auto byte = static_cast<unsigned char>(text[i]);
    if (byte == '\n') {
      ++line;
      column = 1;
    } else if ((byte & 0xC0) != 0x80) {
      ++column;
    }
  }
  return {line, column};
}

// Length of the UTF-8 sequence at `i`, or 0 when the bytes there are not UTF-8 (RFC 3629:
// no overlong forms, no surrogates, nothing past U+10FFFF).
size_t utf8_length(std::string_view text, size_t i) {
  const auto at = [&](size_t k) { return k < text.size() ? static_cast<unsigned char>(text[k]) : 0u; };
  const unsigned b0 = at(i);
  if (b0 < 0x80) return 1;
  const auto continuation = [&](size_t k, unsigned lo = 0x80, unsigned hi = 0xBF) {
    return at(k) >= lo && at(k) <= hi;
  };
  if (b0 >= 0xC2 && b0 <= 0xDF) return continuation(i + 1) ? 2 : 0;
  if (b0 >= 0xE0 && b0 <= 0xEF) {
    const unsigned lo = b0 == 0xE0 ? 0xA0 : 0x80, hi = b0 == 0xED ? 0x9F : 0xBF;
    return continuation(i + 1, lo, hi) && continuation(i + 2) ? 3 : 0;
  }
  if (b0 >= 0xF0 && b0 <= 0xF4) {
    const unsigned lo = b0 == 0xF0 ? 0x90 : 0x80, hi = b0 == 0xF4 ? 0x8F : 0xBF;
    return continuation(i + 1, lo, hi) && continuation(i + 2) && continuation(i + 3) ? 4 : 0;
  }
  return 0;
}

// Reads at most `limit` bytes of `fd`; errno-style failure in `error`.
std::string read_up_to(int fd, size_t limit, int& error) {
  std::string text;
  std::vector<char> buffer(64 * 1024);
  error = 0;
  while (text.size() < limit) {
    const ssize_t n = ::read(fd, buffer.data(), std::min(buffer.size(), limit - text.size()));
    if (n < 0 && errno == EINTR) continue;
    if (n < 0) {
      error = errno;
      break;
    }
    if (n == 0) break;
    text.append(buffer.data(), static_cast<size_t>(n));
  }
  return text;
}

// The checks of the text itself; false (reported) when it is not chain text.
// A binary file is named as such before its size is: /dev/zero is "a NUL byte", not "too large".
bool check_text(const std::string& text, bool truncated, Diagnostics& diagnostics) {
  if (text.empty()) {
    diagnostics.error({1, 1}, "the chain file is empty; expected TOML text with at least one [[stage]] table");
    return false;
  }
  // Past the limit the text was cut, perhaps inside a character: the last bytes are not judged.
  const size_t judged = truncated ? kMaxChainBytes - 3 : text.size();
  for (size_t i = 0; i < judged;) {
    if (text[i] == '\0') {
      diagnostics.error(position_of(text, i), "a NUL byte: this is a binary file, not a chain file (TOML text)");
      return false;
    }
    const size_t length = utf8_length(text, i);
    if (length == 0) {
      diagnostics.error(position_of(text, i),
                        fmt::format("byte 0x{:02X} is not UTF-8 text; a chain file is TOML, which is UTF-8",
                                    static_cast<unsigned char>(text[i])));
      return false;
    }
    i += length;
  }
  if (truncated) {
    diagnostics.error(position_of(text, kMaxChainBytes),
                      fmt::format("the chain file is larger than the limit of {} bytes (4 MiB); a chain file "
                                  "is a few kB of TOML text",
                                  kMaxChainBytes));
    return false;
  }
  return true;
}

}  // namespace

std::optional<std::string> read_chain_text(const std::string& path, Diagnostics& diagnostics) {
  // Standard input can be read only once; every reader of the chain in this run shares it.
  static std::optional<std::string> standard_input;
  static bool standard_input_truncated = false;
  static int standard_input_error = 0;
  std::string text;
  bool truncated = false;
  if (path == "-") {
    if (!standard_input) {
      standard_input = read_up_to(STDIN_FILENO, kMaxChainBytes + 1, standard_input_error);
      standard_input_truncated = standard_input->size() > kMaxChainBytes;
    }
    if (standard_input_error != 0) {
      diagnostics.error({}, std::string("cannot read standard input: ") + std::strerror(standard_input_error));
      return std::nullopt;
    }
    text = *standard_input;
    truncated = standard_input_truncated;
  } else {
    struct stat st {};
    if (::stat(path.c_str(), &st) == 0 && S_ISDIR(st.st_mode)) {
      diagnostics.error({}, "is a directory; expected a chain file (TOML)");
      return std::nullopt;
    }
    const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
    if (fd < 0) {
      diagnostics.error({}, std::string("cannot open the chain file: ") + std::strerror(errno));
      return std::nullopt;
    }
    int error = 0;
    text = read_up_to(fd, kMaxChainBytes + 1, error);
    ::close(fd);
    if (error != 0) {
      diagnostics.error({}, std::string("cannot read the chain file: ") + std::strerror(error));
      return std::nullopt;
    }
    truncated = text.size() > kMaxChainBytes;
  }
  if (!check_text(text, truncated, diagnostics)) return std::nullopt;
  return text;
}

std::optional<size_t> not_text_at(std::string_view text) {
  for (size_t i = 0; i < text.size();) {
    const size_t length = text[i] == '\0' ? 0 : utf8_length(text, i);
    if (length == 0) return i;
    i += length;
  }
  return std::nullopt;
}

bool check_chain_text(std::string_view text, Diagnostics& diagnostics) {
  const bool truncated = text.size() > kMaxChainBytes;
  return check_text(std::string(truncated ? text.substr(0, kMaxChainBytes + 1) : text), truncated, diagnostics);
}

std::optional<size_t> too_deep_at(std::string_view text) {
  // A scan, not a parse: strings and comments are skipped; [ and { open a level, ] and } close
  // one; a '.' while a key is being read (a line's start up to '=', or after '{' or ',' in an
  // inline table) adds one. Levels opened by enclosing keys count towards those inside them.
  struct Open {
    char bracket;
    size_t key_parts;  // of the key the bracket's value belongs to
  };
  std::vector<Open> open;
  size_t enclosing_parts = 0, key_parts = 0;
  bool in_key = true;
  for (size_t i = 0; i < text.size(); ++i) {
    const char c = text[i];
    if (c == '#') {
      while (i + 1 < text.size() && text[i + 1] != '\n') ++i;
    } else if (c == '"' || c == '\'') {
      const bool triple = text.substr(i, 3) == std::string(3, c);
      const std::string_view close = triple ? std::string_view(c == '"' ? "\"\"\"" : "'''") : text.substr(i, 1);
      i += triple ? 3 : 1;
      while (i < text.size() && text.substr(i, close.size()) != close) {
        if (!triple && text[i] == '\n') break;     // an unclosed string: TOML++ reports it
        i += c == '"' && text[i] == '\\' ? 2 : 1;  // an escaped character, a quote included
      }
      if (i < text.size() && text[i] == '\n')
        --i;  // the line's end is seen next
      else if (i < text.size())
        i += close.size() - 1;  // onto the closing quote
    } else if (c == '\n') {
      if (open.empty()) {
        in_key = true;
        key_parts = 0;
      }
    } else if (c == '[' || c == '{') {
      open.push_back({c, key_parts});
      enclosing_parts += key_parts;
      key_parts = 0;
      in_key = c == '{' || (open.size() <= 2 && open.front().key_parts == 0 && in_key);
    } else if ((c == ']' || c == '}') && !open.empty()) {
      key_parts = open.back().key_parts;
      enclosing_parts -= key_parts;
      open.pop_back();
      in_key = false;
    } else if (c == '=') {
      in_key = false;
    } else if (c == ',' && !open.empty() && open.back().bracket == '{') {
      in_key = true;
      key_parts = 0;
    } else if (c == '.' && in_key) {
      ++key_parts;
    }
    if (open.size() + enclosing_parts + key_parts > kMaxNesting) return i;
  }
  return std::nullopt;
}

bool check_nesting(std::string_view text, Diagnostics& diagnostics) {
  const auto at = too_deep_at(text);
  if (!at) return true;
  diagnostics.error(position_of(text, *at),
                    fmt::format("nested deeper than the limit of {} levels (tables, arrays and the parts of a "
                                "dotted key); a chain file needs 3",
                                kMaxNesting));
  return false;
}

}  // namespace peakplan
