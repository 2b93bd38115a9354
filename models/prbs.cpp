#include "models/prbs.hpp"

#include <bit>
#include <stdexcept>

namespace peakplan {

PrbsPolynomial prbs_polynomial(PrbsKind kind) {
  switch (kind) {
    case PrbsKind::prbs7: return {7, {7, 6}};
    case PrbsKind::prbs9: return {9, {9, 5}};
    case PrbsKind::prbs13: return {13, {13, 12, 2, 1}};
    case PrbsKind::prbs15: return {15, {15, 14}};
    case PrbsKind::prbs23: return {23, {23, 18}};
    case PrbsKind::prbs31: return {31, {31, 28}};
  }
  throw std::logic_error("prbs_polynomial: unknown kind");
}

std::uint64_t prbs_period(PrbsKind kind) {
  return (std::uint64_t{1} << prbs_polynomial(kind).order) - 1;
}

std::optional<PrbsKind> prbs_from_name(std::string_view name) {
  for (PrbsKind k : {PrbsKind::prbs7, PrbsKind::prbs9, PrbsKind::prbs13, PrbsKind::prbs15,
                     PrbsKind::prbs23, PrbsKind::prbs31})
    if (to_string(k) == name) return k;
  return std::nullopt;
}

std::string_view to_string(PrbsKind kind) {
  switch (kind) {
    case PrbsKind::prbs7: return "prbs7";
    case PrbsKind::prbs9: return "prbs9";
    case PrbsKind::prbs13: return "prbs13";
    case PrbsKind::prbs15: return "prbs15";
    case PrbsKind::prbs23: return "prbs23";
    case PrbsKind::prbs31: return "prbs31";
  }
  throw std::logic_error("to_string: unknown PRBS kind");
}

PrbsGenerator::PrbsGenerator(PrbsKind kind) {
  const auto poly = prbs_polynomial(kind);
  mask_ = static_cast<std::uint32_t>((std::uint64_t{1} << poly.order) - 1);
  state_ = mask_;
  taps_ = 0;
  for (int k : poly.powers) taps_ |= std::uint32_t{1} << (k - 1);
}

int PrbsGenerator::next() {
  const auto bit = static_cast<std::uint32_t>(std::popcount(state_ & taps_) & 1);
  state_ = ((state_ << 1) | bit) & mask_;
  return static_cast<int>(bit);
}

void PrbsGenerator::jump(std::uint64_t steps) {
  // Column j of the step matrix is the state one step after the unit state e_j; a matrix is
  // kept as its columns (bit masks), and applying it XORs the columns of the set bits.
  const int n = std::popcount(mask_);
  using Matrix = std::vector<std::uint32_t>;
  auto apply = [&](const Matrix& m, std::uint32_t v) {
    std::uint32_t out = 0;
    for (int j = 0; j < n; ++j)
      if ((v >> j) & 1u) out ^= m[static_cast<size_t>(j)];
    return out;
  };
  auto times = [&](const Matrix& a, const Matrix& b) {  // a * b, column by column
    Matrix c(static_cast<size_t>(n));
    for (int j = 0; j < n; ++j) c[static_cast<size_t>(j)] = apply(a, b[static_cast<size_t>(j)]);
    return c;
  };
  Matrix step(static_cast<size_t>(n));
  for (int j = 0; j < n; ++j) {
    const std::uint32_t e = std::uint32_t{1} << j;
    const auto bit = static_cast<std::uint32_t>(std::popcount(e & taps_) & 1);
    step[static_cast<size_t>(j)] = ((e << 1) | bit) & mask_;
  }
  for (; steps > 0; steps >>= 1) {
    if (steps & 1u) state_ = apply(step, state_);
    step = times(step, step);
  }
}

std::uint64_t prbs_typical_start(PrbsKind kind) { return prbs_period(kind) / 2; }

std::vector<std::uint8_t> prbs_bits(PrbsKind kind, std::size_t count, std::uint64_t start) {
  PrbsGenerator gen(kind);
  gen.jump(start);
  std::vector<std::uint8_t> bits(count);
  for (auto& b : bits) b = static_cast<std::uint8_t>(gen.next());
  return bits;
}

std::vector<double> nrz_levels(const std::vector<std::uint8_t>& bits) {
  return std::vector<double>(bits.begin(), bits.end());
}

int pam4_gray_index(int first_bit, int second_bit) {
  // Gray order 00, 01, 11, 10: adjacent levels differ in one bit, so a slicer error to a
  // neighbouring level costs one bit.
  static constexpr int kIndex[2][2] = {{0, 1}, {3, 2}};
  return kIndex[first_bit & 1][second_bit & 1];
}

std::vector<double> pam4_levels(const std::vector<std::uint8_t>& bits) {
  std::vector<double> levels(bits.size() / 2);
  for (std::size_t i = 0; i < levels.size(); ++i)
    levels[i] = pam4_gray_index(bits[2 * i], bits[2 * i + 1]) / 3.0;
  return levels;
}

}  // namespace peakplan
