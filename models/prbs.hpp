// Pseudo-random binary sequences and the symbol levels they drive (docs/physics.md (metrics)).
//
// PRBSn is the maximal-length sequence of x^n + x^t + 1 from an n-bit register seeded with all
// ones: each step computes b(n-1) XOR b(t-1), shifts it in at b0 and outputs it. Its period is
// 2^n - 1 bits and it contains every n-bit word except all zeros once per period. PRBS13, the
// usual PAM4 test pattern, has no primitive trinomial and uses x^13 + x^12 + x^2 + x + 1 (the
// polynomial of IEEE 802.3 for PRBS13, from memory; that it is primitive is checked by the
// period test): the new bit is b12 XOR b11 XOR b1 XOR b0.
#pragma once

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string_view>
#include <vector>

namespace peakplan {

enum class PrbsKind { prbs7, prbs9, prbs13, prbs15, prbs23, prbs31 };

struct PrbsPolynomial {
  int order;                // n, the highest power
  std::vector<int> powers;  // every power but 0 with a nonzero coefficient, n first: {7, 6}
};
PrbsPolynomial prbs_polynomial(PrbsKind kind);
// 2^n - 1.
std::uint64_t prbs_period(PrbsKind kind);
std::optional<PrbsKind> prbs_from_name(std::string_view name);
std::string_view to_string(PrbsKind kind);

class PrbsGenerator {
 public:
  explicit PrbsGenerator(PrbsKind kind);
  int next();  // 0 or 1
  // Advances the register by `steps` bits at once (the step is linear over GF(2): its matrix
  // raised to `steps` by repeated squaring), as if next() had been called that many times.
  void jump(std::uint64_t steps);
  std::uint32_t state() const { return state_; }

 private:
  std::uint32_t state_;
  std::uint32_t mask_;
  std::uint32_t taps_;  // bit k-1 set for each power k: the feedback is their parity
};

// `count` bits of the sequence from bit `start` (0: right after the all-ones seed).
std::vector<std::uint8_t> prbs_bits(PrbsKind kind, std::size_t count, std::uint64_t start = 0);
// Where a stretch of a pattern too long to overlay whole starts: half a period in, far from the
// seed's run of zeros (x^31 + x^28 + 1 begins with 28 of them), so the stretch is a typical one.
std::uint64_t prbs_typical_start(PrbsKind kind);

// NRZ levels: bit 0 -> 0, bit 1 -> 1.
std::vector<double> nrz_levels(const std::vector<std::uint8_t>& bits);
// PAM4 levels from consecutive bit pairs (first bit most significant), Gray coded:
// 00 -> 0, 01 -> 1/3, 11 -> 2/3, 10 -> 1. A trailing odd bit is dropped.
std::vector<double> pam4_levels(const std::vector<std::uint8_t>& bits);
// The Gray-coded PAM4 level index (0..3) of a bit pair.
int pam4_gray_index(int first_bit, int second_bit);

}  // namespace peakplan
