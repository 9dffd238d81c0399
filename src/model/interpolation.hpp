// Piecewise-cubic interpolation of tabulated profiles: a C² cubic spline for index tables and a
// shape-preserving (monotone, never overshooting) cubic for attenuation tables. Both evaluate in
// O(1) through a uniform bucket index over the knots and never allocate after construction.
#pragma once

#include <cstddef>
#include <vector>

namespace firnray {

// Finds the interval [x_i, x_{i+1}) holding x among strictly increasing knots. A uniform grid of
// buckets over [x_0, x_last] remembers where each bucket starts, so a lookup is one division plus
// a binary search over the few knots that fall in one bucket.
class IntervalLocator {
public:
    IntervalLocator() = default;
    explicit IntervalLocator(const std::vector<double>& knots);  // needs >= 2 strictly increasing knots
    // Index i in [0, n-2] with knots[i] <= x < knots[i+1]; clamped at both ends.
    std::size_t find(double x) const;

private:
    const double* knots_ = nullptr;  // points into the owner's knot vector
    std::size_t count_ = 0;
    double first_ = 0.0, inverse_width_ = 0.0;
    std::vector<std::size_t> bucket_start_;
};

// One cubic piece y = a + b t + c t² + d t³ with t = x - x_i.
struct CubicPiece {
    double a = 0.0, b = 0.0, c = 0.0, d = 0.0;
    double value(double t) const { return a + t * (b + t * (c + t * d)); }
    double slope(double t) const { return b + t * (2.0 * c + t * 3.0 * d); }
    double curvature(double t) const { return 2.0 * c + 6.0 * t * d; }
};

// How a cubic spline ends: zero curvature (natural) or a prescribed slope (clamped).
struct SplineEnd {
    enum class Kind { natural, clamped } kind = Kind::natural;
    double slope = 0.0;  // used when clamped
    static SplineEnd natural() { return {}; }
    static SplineEnd clamped(double slope) { return {Kind::clamped, slope}; }
};

// Interpolating cubic spline, C² inside the knots. Outside [x_0, x_last] it continues as the
// straight line with the end value and end slope, so it stays C¹ everywhere; at a natural end the
// curvature is zero on both sides, so there it is even C².
class CubicSpline {
public:
    CubicSpline() = default;
    // x strictly increasing, same size as y, at least 2 points (callers validate with locations).
    CubicSpline(std::vector<double> x, std::vector<double> y, SplineEnd first, SplineEnd last);
    CubicSpline(const CubicSpline& other);
    CubicSpline& operator=(const CubicSpline& other);
    CubicSpline(CubicSpline&&) noexcept = default;
    CubicSpline& operator=(CubicSpline&&) noexcept = default;

    // Cubic Hermite interpolation through the knots with the given slopes there: C¹ (the
    // curvature may jump at the knots), the same piece structure and straight continuation
    // outside [x_0, x_last] as the C² spline. With fritsch_carlson_slopes it preserves monotonicity.
    static CubicSpline hermite(std::vector<double> x, std::vector<double> y, const std::vector<double>& slopes);

    double value(double x) const;
    void value_and_slope(double x, double& y, double& dy_dx) const;
    // Smallest value over [x_0, x_last] (from the extrema of every cubic piece).
    double minimum_on_knots() const;

    // The spline as pieces that are each smooth: 0 is the line before x_0, k in [1, knots − 1] the
    // cubic between x_{k−1} and x_k, knots the line after x_last. A piece is evaluated as its own
    // polynomial at any x (continued beyond its interval), so an integrator that stops at the
    // knots never sees the jump of the third derivative there.
    std::size_t piece_count() const { return x_.size() + 1; }
    void piece_value(std::size_t piece, double x, double& y, double& dy_dx, double& d2y_dx2) const;

    const std::vector<double>& x() const { return x_; }
    const std::vector<double>& y() const { return y_; }

private:
    std::vector<double> x_, y_;
    std::vector<CubicPiece> pieces_;
    double first_slope_ = 0.0, last_slope_ = 0.0;
    IntervalLocator locator_;
};

// Knot slopes for a monotone piecewise-cubic Hermite interpolant (Fritsch & Carlson 1980, SIAM J.
// Numer. Anal. 17(2), harmonic-mean slopes of Fritsch & Butland): zero at a local extremum of the
// data, so the interpolant never leaves the range of neighbouring points (no overshoot).
std::vector<double> fritsch_carlson_slopes(const std::vector<double>& x, const std::vector<double>& y);

// Monotone piecewise-cubic Hermite interpolation (Fritsch & Carlson 1980, SIAM J. Numer. Anal.
// 17(2), with the harmonic-mean slopes of Fritsch & Butland): C¹, never leaves the range of the
// neighbouring data. Outside the knots it holds the end values constant (continuous, not C¹).
class MonotoneCubic {
public:
    MonotoneCubic() = default;
    MonotoneCubic(std::vector<double> x, std::vector<double> y);  // >= 2 points, x strictly increasing
    MonotoneCubic(const MonotoneCubic& other);
    MonotoneCubic& operator=(const MonotoneCubic& other);
    MonotoneCubic(MonotoneCubic&&) noexcept = default;
    MonotoneCubic& operator=(MonotoneCubic&&) noexcept = default;

    double value(double x) const;
    const std::vector<double>& x() const { return x_; }
    const std::vector<double>& y() const { return y_; }

private:
    std::vector<double> x_, y_;
    std::vector<CubicPiece> pieces_;
    IntervalLocator locator_;
};

}  // namespace firnray
