// LU factorisation with partial pivoting of a small complex matrix (the nodal system of one
// stage: N <= 8 unknowns), for the solves a sampled response or a noise integral repeats
// thousands of times.
//
// Eigen's PartialPivLU would do, but it picks each pivot by |z|, one hypot call per candidate,
// which made up about a third of a sampled response's time. The pivot here is the largest
// |re| + |im| of the column, the choice LAPACK's zgetrf makes (izamax, through dcabs1): the
// two magnitudes are within a factor sqrt(2) of each other, so every multiplier is at most
// sqrt(2) in modulus instead of 1, and the elimination stays as stable as partial pivoting.
// The elimination and the two triangular sweeps are otherwise the textbook ones (Golub and
// Van Loan, Matrix Computations, sections 3.1 and 3.4), column-oriented, with each pivot
// inverted once (a division costs several multiplications). A zero pivot (a singular matrix) is left in place, as Eigen leaves it, and
// solutions then hold infinities or NaNs.
#pragma once

#include <array>
#include <cmath>
#include <complex>
#include <utility>

namespace peakplan {

template <int N>
class SmallLU {
 public:
  using Complex = std::complex<double>;
  using Vector = std::array<Complex, N>;

  // Factorises the matrix a(r, c), r, c in [0, N).
  template <class Entry>
  explicit SmallLU(Entry&& a) {
    for (int r = 0; r < N; ++r)
      for (int c = 0; c < N; ++c) lu_[r][c] = a(r, c);
    factorise();
  }

  // det A: the product of the pivots (U's diagonal), negated once per row exchange.
  Complex determinant() const {
    Complex det = 1.0;
    for (int k = 0; k < N; ++k) det *= swap_[k] != k ? -lu_[k][k] : lu_[k][k];
    return det;
  }

  // x with A x = b (b is overwritten).
  void solve(Vector& b) const {
    for (int k = 0; k < N; ++k) std::swap(b[k], b[swap_[k]]);
    for (int k = 0; k < N; ++k)  // L y = P b, L unit lower triangular
      for (int r = k + 1; r < N; ++r) b[r] -= lu_[r][k] * b[k];
    for (int k = N - 1; k >= 0; --k) {  // U x = y
      b[k] *= inverse_[k];
      for (int r = 0; r < k; ++r) b[r] -= lu_[r][k] * b[k];
    }
  }

 private:
  static double score(const Complex& z) { return std::fabs(z.real()) + std::fabs(z.imag()); }

  void factorise() {
    for (int k = 0; k < N; ++k) {
      int pivot = k;
      double biggest = score(lu_[k][k]);
      for (int r = k + 1; r < N; ++r) {
        const double s = score(lu_[r][k]);
        if (s > biggest) {
          biggest = s;
          pivot = r;
        }
      }
      swap_[k] = pivot;
      if (pivot != k) std::swap(lu_[k], lu_[pivot]);
      // One division per pivot; the multipliers and the back substitution multiply by it.
      const Complex& p = lu_[k][k];
      const double to_norm = 1.0 / std::norm(p);
      inverse_[k] = Complex(p.real() * to_norm, -p.imag() * to_norm);
      if (biggest == 0.0) continue;  // singular: nothing to eliminate with
      for (int r = k + 1; r < N; ++r) lu_[r][k] *= inverse_[k];
      for (int r = k + 1; r < N; ++r)
        for (int c = k + 1; c < N; ++c) lu_[r][c] -= lu_[r][k] * lu_[k][c];
    }
  }

  std::array<std::array<Complex, N>, N> lu_{};
  std::array<Complex, N> inverse_{};  // 1 / the pivot of each column
  std::array<int, N> swap_{};  // row k was exchanged with row swap_[k] at step k
};

}  // namespace peakplan
