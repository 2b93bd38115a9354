#include <doctest/doctest.h>

#include <algorithm>
#include <map>
#include <vector>

#include "models/prbs.hpp"

using namespace peakplan;

namespace {

// Runs of a periodic sequence, counted cyclically: (value, length) -> how many.
std::map<std::pair<int, int>, std::uint64_t> cyclic_runs(const std::vector<std::uint8_t>& s) {
  const std::size_t n = s.size();
  std::size_t start = 0;  // a run boundary, so no run is split by the wrap
  while (start < n && s[start] == s[(start + n - 1) % n]) ++start;
  std::map<std::pair<int, int>, std::uint64_t> runs;
  std::size_t i = 0;
  while (i < n) {
    const int value = s[(start + i) % n];
    int length = 0;
    while (i < n && s[(start + i) % n] == value) {
      ++length;
      ++i;
    }
    ++runs[{value, length}];
  }
  return runs;
}

// The run-length distribution of a maximal-length sequence of degree n over one period:
// for 1 <= k <= n-2, 2^(n-k-2) runs of ones and as many of zeros of length k; one run of n ones;
// one run of n-1 zeros; nothing else (S. W. Golomb, Shift Register Sequences, 1967, the run
// postulate; from memory. It follows from every nonzero n-bit word appearing once per period:
// a run of exactly k ones is the window 0 1^k 0, whose remaining n-k-2 bits are free).
void check_maximal_length(PrbsKind kind) {
  const int n = prbs_polynomial(kind).order;
  const std::uint64_t period = prbs_period(kind);
  CAPTURE(n);
  // One period plus one bit: the sequence must repeat exactly after 2^n - 1 bits.
  PrbsGenerator gen(kind);
  const auto seed = gen.state();
  std::vector<std::uint8_t> s(period);
  std::uint64_t first_return = 0;
  for (std::uint64_t k = 0; k < period; ++k) {
    s[k] = static_cast<std::uint8_t>(gen.next());
    if (first_return == 0 && gen.state() == seed) first_return = k + 1;
  }
  CHECK(first_return == period);  // derived: the register returns to its seed once per period
  std::uint64_t ones = 0;
  for (auto b : s) ones += b;
  CHECK(ones == (std::uint64_t{1} << (n - 1)));  // every nonzero word once: 2^(n-1) ones

  const auto runs = cyclic_runs(s);
  std::uint64_t total = 0;
  for (const auto& [key, count] : runs) total += count;
  CHECK(total == (std::uint64_t{1} << (n - 1)));
  for (int k = 1; k <= n - 2; ++k) {
    CAPTURE(k);
    const std::uint64_t expected = std::uint64_t{1} << (n - k - 2);
    CHECK(runs.count({1, k}) == 1);
    CHECK(runs.at({1, k}) == expected);
    CHECK(runs.at({0, k}) == expected);
  }
  CHECK(runs.at({1, n}) == 1);
  CHECK(runs.at({0, n - 1}) == 1);
  CHECK(runs.count({1, n - 1}) == 0);
  CHECK(runs.count({0, n}) == 0);
}

}  // namespace

TEST_CASE("prbs: the first bits of prbs7 follow the stated register rule") {
  // derived by hand from the rule in models/prbs.hpp: seed 1111111, new bit = b6 XOR b5. Output s[j] then obeys
  // s[j] = s[j-7] XOR s[j-6] with s[-1..-7] = 1: s[0..5] = 0 (1 XOR 1), s[6] = s[-1] XOR s[0] = 1,
  // s[7..11] = 0, s[12] = s[5] XOR s[6] = 1, s[13] = s[6] XOR s[7] = 1.
  const std::vector<std::uint8_t> expected{0, 0, 0, 0, 0, 0, 1, 0, 0, 0, 0, 0, 1, 1};
  CHECK(prbs_bits(PrbsKind::prbs7, expected.size()) == expected);
}

TEST_CASE("prbs: prbs7, prbs9, prbs13, prbs15 and prbs23 are maximal-length sequences") {
  check_maximal_length(PrbsKind::prbs7);
  check_maximal_length(PrbsKind::prbs9);
  // x^13 + x^12 + x^2 + x + 1 (from memory): a period of exactly 8191 and the run postulate
  // hold only if that polynomial is primitive, so a misremembered one fails here.
  check_maximal_length(PrbsKind::prbs13);
  check_maximal_length(PrbsKind::prbs15);
  check_maximal_length(PrbsKind::prbs23);  // 8 M bits: cheap enough for the full period
}

TEST_CASE("prbs: prbs31 obeys its recurrence and does not repeat within a long prefix") {
  // derived: after outputting s[k] the register holds b_i = s[k-i], so the next bit
  // b30 XOR b27 is s[j] = s[j-31] XOR s[j-28]; the register equals the last 31 outputs.
  constexpr std::size_t prefix = std::size_t{1} << 22;
  PrbsGenerator gen(PrbsKind::prbs31);
  std::vector<std::uint8_t> s(prefix);
  std::vector<std::uint32_t> states(prefix);
  for (std::size_t k = 0; k < prefix; ++k) {
    s[k] = static_cast<std::uint8_t>(gen.next());
    states[k] = gen.state();
  }
  bool recurrence = true, register_is_history = true;
  for (std::size_t j = 31; j < prefix; ++j) {
    recurrence = recurrence && s[j] == (s[j - 31] ^ s[j - 28]);
    if (j % 4099 == 0) {
      std::uint32_t history = 0;
      for (int i = 30; i >= 0; --i) history = (history << 1) | s[j - static_cast<std::size_t>(i)];
      register_is_history = register_is_history && history == states[j];
    }
  }
  CHECK(recurrence);
  CHECK(register_is_history);
  // A maximal-length register visits 2^31 - 1 distinct states before repeating (derived from
  // the period); a wrong tap or a stuck register repeats early.
  std::sort(states.begin(), states.end());
  CHECK(std::adjacent_find(states.begin(), states.end()) == states.end());
  CHECK(states.front() != 0u);
}

TEST_CASE("prbs: the first bits of prbs13 follow its four-tap rule") {
  // derived by hand: seed 1 x 13, new bit = b12 ^ b11 ^ b1 ^ b0, so s[j] = s[j-13] ^ s[j-12] ^
  // s[j-2] ^ s[j-1] with s[-1..-13] = 1: s[0] = 1^1^1^1 = 0, s[1] = 1^1^1^0 = 1 (s[-1] = 1,
  // s[0] = 0), s[2] = 1^1^0^1 = 1 (s[0] = 0, s[1] = 1), s[3] = 1^1^1^1 = 0 (s[1] = s[2] = 1).
  const std::vector<std::uint8_t> expected{0, 1, 1, 0};
  CHECK(prbs_bits(PrbsKind::prbs13, expected.size()) == expected);
}

TEST_CASE("prbs: names and periods") {
  CHECK(prbs_period(PrbsKind::prbs7) == 127);
  CHECK(prbs_period(PrbsKind::prbs31) == 2147483647ull);
  CHECK(prbs_from_name("prbs15") == PrbsKind::prbs15);
  CHECK(prbs_period(PrbsKind::prbs13) == 8191);
  CHECK(prbs_from_name("prbs13") == PrbsKind::prbs13);
  CHECK(!prbs_from_name("prbs8").has_value());
  CHECK(to_string(PrbsKind::prbs23) == "prbs23");
}

TEST_CASE("prbs: PAM4 Gray mapping 00, 01, 11, 10 -> 0, 1/3, 2/3, 1") {
  const auto levels = pam4_levels({0, 0, 0, 1, 1, 1, 1, 0, 1});  // the odd last bit is dropped
  REQUIRE(levels.size() == 4);
  CHECK(levels[0] == doctest::Approx(0.0));
  CHECK(levels[1] == doctest::Approx(1.0 / 3.0));
  CHECK(levels[2] == doctest::Approx(2.0 / 3.0));
  CHECK(levels[3] == doctest::Approx(1.0));
}

TEST_CASE("prbs: PAM4 from prbs7 uses each level a quarter of the time") {
  // derived: 127 is odd, so the pairs of two periods (254 bits) start at every position of the
  // cycle once; the 2-bit windows of a degree-7 maximal sequence are 11, 10, 01 32 times each
  // and 00 31 times (every nonzero 7-bit word once).
  const auto levels = pam4_levels(prbs_bits(PrbsKind::prbs7, 254));
  REQUIRE(levels.size() == 127);
  int count[4] = {0, 0, 0, 0};
  for (double v : levels) ++count[static_cast<int>(v * 3.0 + 0.5)];
  CHECK(count[0] == 31);
  CHECK(count[1] == 32);
  CHECK(count[2] == 32);
  CHECK(count[3] == 32);
}

TEST_CASE("prbs: jumping ahead equals stepping, and a stretch of a long pattern starts half a period in") {
  // derived: the register's step is linear over GF(2), so k steps are its matrix to the k.
  for (const auto kind : {PrbsKind::prbs9, PrbsKind::prbs13, PrbsKind::prbs23}) {
    PrbsGenerator stepped(kind), jumped(kind);
    for (int i = 0; i < 100003; ++i) stepped.next();
    jumped.jump(100003);
    CHECK(jumped.state() == stepped.state());
    PrbsGenerator around(kind);
    const auto seed = around.state();
    around.jump(prbs_period(kind));  // a whole period returns to the seed
    CHECK(around.state() == seed);
  }
  CHECK(prbs_typical_start(PrbsKind::prbs31) == (prbs_period(PrbsKind::prbs31) / 2));
  // x^31 + x^28 + 1 from all ones begins with 28 zeros (s[j] = 1 ^ 1 until the first zero
  // reaches b27); half a period in, a stretch has no run that long among its first 4096 bits
  // (a run of 28 zeros appears once per period of 2^31 - 1 bits: the run postulate).
  const auto start = prbs_bits(PrbsKind::prbs31, 28);
  CHECK(std::all_of(start.begin(), start.end(), [](auto b) { return b == 0; }));
  const auto typical = prbs_bits(PrbsKind::prbs31, 4096, prbs_typical_start(PrbsKind::prbs31));
  int run = 0, longest = 0;
  for (auto b : typical) longest = std::max(longest, run = b == 0 ? run + 1 : 0);
  CHECK(longest < 28);
}
