// Root finding on a bracket (TOMS748 and Brent's minimiser from Boost.Math) for the numerical
// core, with Boost.Math's own exceptions ("do not bracket the root", evaluation and domain
// errors) turned into NumericalError, so that only the library's typed errors leave it.
#pragma once

#include <cstdint>
#include <exception>
#include <string>
#include <utility>

#include <boost/math/tools/minima.hpp>
#include <boost/math/tools/toms748_solve.hpp>

#include "core/errors.hpp"

namespace firnray {

// Runs `solve` and rethrows anything but the library's own errors as NumericalError, naming
// `what` was being solved for. The function solved may throw typed errors itself (a solver
// called inside it); those pass through unchanged.
template <class Solve>
auto guard_boost_math(const char* what, Solve solve) -> decltype(solve()) {
    try {
        return solve();
    } catch (const Error&) {
        throw;
    } catch (const std::exception& e) {
        throw NumericalError(std::string("the numerics failed while computing ") + what + ": " + e.what());
    }
}

// The bracket [lo, hi] around the root of f in [a, b] (f(a) = fa and f(b) = fb of opposite signs,
// or one of them zero), to `bits` bits, in at most `max_iterations` evaluations.
template <class F>
std::pair<double, double> toms748_bracket(const char* what, F f, double a, double b, double fa, double fb, int bits,
                                          std::uintmax_t max_iterations) {
    return guard_boost_math(what, [&] {
        std::uintmax_t iterations = max_iterations;
        return boost::math::tools::toms748_solve(f, a, b, fa, fb, boost::math::tools::eps_tolerance<double>(bits),
                                                 iterations);
    });
}

// The midpoint of that bracket.
template <class F>
double toms748_root(const char* what, F f, double a, double b, double fa, double fb, int bits,
                    std::uintmax_t max_iterations) {
    const auto [lo, hi] = toms748_bracket(what, f, a, b, fa, fb, bits, max_iterations);
    return 0.5 * (lo + hi);
}

// The minimum of f on [a, b] (Brent), as (abscissa, value), to `bits` bits.
template <class F>
std::pair<double, double> brent_minimum(const char* what, F f, double a, double b, int bits) {
    return guard_boost_math(what, [&] { return boost::math::tools::brent_find_minima(f, a, b, bits); });
}

}  // namespace firnray
