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

std::vector<std::uint8_t> prbs_bits(PrbsKind kind, std::size_t count) {
  PrbsGenerator gen(kind);
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
