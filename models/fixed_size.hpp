// One place for the dispatch from a run-time size to code compiled for that size: the small
// systems and state vectors of a stage or a cascade (a few unknowns) are solved and stepped many
// thousands of times, and loops of a size known to the compiler are unrolled and vectorised.
#pragma once

#include <type_traits>
#include <utility>

namespace peakplan {

// body(std::integral_constant<int, n>{}) when 1 <= n <= Max, else fallback(); both return the
// same type.
template <int Max, class Body, class Fallback>
decltype(auto) with_fixed_size(int n, Body&& body, Fallback&& fallback) {
  if constexpr (Max < 1) {
    return fallback();
  } else {
    if (n == Max) return body(std::integral_constant<int, Max>{});
    return with_fixed_size<Max - 1>(n, std::forward<Body>(body), std::forward<Fallback>(fallback));
  }
}

}  // namespace peakplan
