#include "model/interpolation.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>

namespace firnray {

IntervalLocator::IntervalLocator(const std::vector<double>& knots)
    : knots_(knots.data()), count_(knots.size()) {
    if (count_ < 2) throw std::invalid_argument("IntervalLocator needs at least two knots");
    first_ = knots.front();
    // About four buckets per interval keeps the binary search to one or two comparisons even
    // when the spacing is uneven.
    const std::size_t buckets = std::max<std::size_t>(16, 4 * count_);
    inverse_width_ = static_cast<double>(buckets) / (knots.back() - first_);
    bucket_start_.resize(buckets + 1);
    std::size_t i = 0;
    for (std::size_t b = 0; b <= buckets; ++b) {
        const double edge = first_ + static_cast<double>(b) / inverse_width_;
        while (i + 2 < count_ && knots[i + 1] <= edge) ++i;
        bucket_start_[b] = i;
    }
}

std::size_t IntervalLocator::find(double x) const {
    const std::size_t last_interval = count_ - 2;
    if (!(x > first_)) return 0;  // also catches NaN
    if (x >= knots_[count_ - 1]) return last_interval;
    const std::size_t buckets = bucket_start_.size() - 1;
    const auto b = std::min(static_cast<std::size_t>((x - first_) * inverse_width_), buckets - 1);
    // Widen by one knot on each side so that rounding in the bucket edges can never exclude the answer.
    const std::size_t lo = bucket_start_[b] > 0 ? bucket_start_[b] - 1 : 0;
    const std::size_t hi = std::min(bucket_start_[b + 1] + 1, last_interval);
    const double* upper = std::upper_bound(knots_ + lo, knots_ + hi + 1, x);
    const std::ptrdiff_t i = (upper - knots_) - 1;
    return static_cast<std::size_t>(std::clamp<std::ptrdiff_t>(i, static_cast<std::ptrdiff_t>(lo),
                                                               static_cast<std::ptrdiff_t>(hi)));
}

// ---------------------------------------------------------------------------------------------

CubicSpline::CubicSpline(std::vector<double> x, std::vector<double> y, SplineEnd first, SplineEnd last)
    : x_(std::move(x)), y_(std::move(y)) {
    const std::size_t n = x_.size();
    if (n < 2 || y_.size() != n) throw std::invalid_argument("CubicSpline needs two or more (x, y) pairs");
    for (std::size_t i = 1; i < n; ++i)
        if (!(x_[i] > x_[i - 1])) throw std::invalid_argument("CubicSpline knots must increase strictly");

    // Second derivatives m_i from the usual tridiagonal system (any numerical-analysis text, e.g.
    // Press et al., Numerical Recipes §3.3), solved with the Thomas algorithm.
    std::vector<double> h(n - 1), lower(n, 0.0), diag(n, 0.0), upper(n, 0.0), rhs(n, 0.0);
    for (std::size_t i = 0; i + 1 < n; ++i) h[i] = x_[i + 1] - x_[i];
    auto secant = [&](std::size_t i) { return (y_[i + 1] - y_[i]) / h[i]; };
    if (first.kind == SplineEnd::Kind::natural) {
        diag[0] = 1.0;
    } else {
        diag[0] = 2.0 * h[0];
        upper[0] = h[0];
        rhs[0] = 6.0 * (secant(0) - first.slope);
    }
    for (std::size_t i = 1; i + 1 < n; ++i) {
        lower[i] = h[i - 1];
        diag[i] = 2.0 * (h[i - 1] + h[i]);
        upper[i] = h[i];
        rhs[i] = 6.0 * (secant(i) - secant(i - 1));
    }
    if (last.kind == SplineEnd::Kind::natural) {
        diag[n - 1] = 1.0;
        lower[n - 1] = 0.0;
    } else {
        lower[n - 1] = h[n - 2];
        diag[n - 1] = 2.0 * h[n - 2];
        rhs[n - 1] = 6.0 * (last.slope - secant(n - 2));
    }
    for (std::size_t i = 1; i < n; ++i) {
        const double factor = lower[i] / diag[i - 1];
        diag[i] -= factor * upper[i - 1];
        rhs[i] -= factor * rhs[i - 1];
    }
    std::vector<double> m(n);
    m[n - 1] = rhs[n - 1] / diag[n - 1];
    for (std::size_t i = n - 1; i-- > 0;) m[i] = (rhs[i] - upper[i] * m[i + 1]) / diag[i];

    pieces_.resize(n - 1);
    for (std::size_t i = 0; i + 1 < n; ++i) {
        CubicPiece& p = pieces_[i];
        p.a = y_[i];
        p.b = secant(i) - h[i] * (2.0 * m[i] + m[i + 1]) / 6.0;
        p.c = m[i] / 2.0;
        p.d = (m[i + 1] - m[i]) / (6.0 * h[i]);
    }
    first_slope_ = pieces_.front().b;
    last_slope_ = pieces_.back().slope(h[n - 2]);
    if (last.kind == SplineEnd::Kind::clamped) last_slope_ = last.slope;  // exact, not rounded
    if (first.kind == SplineEnd::Kind::clamped) first_slope_ = first.slope;
    locator_ = IntervalLocator(x_);
}

std::vector<double> fritsch_carlson_slopes(const std::vector<double>& x, const std::vector<double>& y) {
    const std::size_t n = x.size();
    if (n < 2 || y.size() != n) throw std::invalid_argument("monotone slopes need two or more (x, y) pairs");
    std::vector<double> h(n - 1), delta(n - 1), slope(n, 0.0);
    for (std::size_t i = 0; i + 1 < n; ++i) {
        h[i] = x[i + 1] - x[i];
        delta[i] = (y[i + 1] - y[i]) / h[i];
    }
    if (n == 2) {
        slope[0] = slope[1] = delta[0];
        return slope;
    }
    // Interior: weighted harmonic mean of the neighbouring secants, zero at a local extremum.
    for (std::size_t i = 1; i + 1 < n; ++i) {
        if (delta[i - 1] * delta[i] <= 0.0) continue;
        const double w1 = 2.0 * h[i] + h[i - 1], w2 = h[i] + 2.0 * h[i - 1];
        slope[i] = (w1 + w2) / (w1 / delta[i - 1] + w2 / delta[i]);
    }
    // Ends: the three-point formula, limited so that the end piece stays monotone.
    auto end_slope = [](double h0, double h1, double d0, double d1) {
        double s = ((2.0 * h0 + h1) * d0 - h0 * d1) / (h0 + h1);
        if (s * d0 <= 0.0) s = 0.0;
        else if (d0 * d1 <= 0.0 && std::abs(s) > std::abs(3.0 * d0)) s = 3.0 * d0;
        return s;
    };
    slope[0] = end_slope(h[0], h[1], delta[0], delta[1]);
    slope[n - 1] = end_slope(h[n - 2], h[n - 3], delta[n - 2], delta[n - 3]);
    return slope;
}

CubicSpline CubicSpline::hermite(std::vector<double> x, std::vector<double> y, const std::vector<double>& slopes) {
    const std::size_t n = x.size();
    if (n < 2 || y.size() != n || slopes.size() != n)
        throw std::invalid_argument("Hermite interpolation needs two or more (x, y, slope) triples");
    for (std::size_t i = 1; i < n; ++i)
        if (!(x[i] > x[i - 1])) throw std::invalid_argument("Hermite knots must increase strictly");
    CubicSpline out;
    out.x_ = std::move(x);
    out.y_ = std::move(y);
    out.pieces_.resize(n - 1);
    for (std::size_t i = 0; i + 1 < n; ++i) {
        const double h = out.x_[i + 1] - out.x_[i], delta = (out.y_[i + 1] - out.y_[i]) / h;
        CubicPiece& p = out.pieces_[i];
        p.a = out.y_[i];
        p.b = slopes[i];
        p.c = (3.0 * delta - 2.0 * slopes[i] - slopes[i + 1]) / h;
        p.d = (slopes[i] + slopes[i + 1] - 2.0 * delta) / (h * h);
    }
    out.first_slope_ = slopes.front();
    out.last_slope_ = slopes.back();
    out.locator_ = IntervalLocator(out.x_);
    return out;
}

CubicSpline::CubicSpline(const CubicSpline& other)
    : x_(other.x_), y_(other.y_), pieces_(other.pieces_), first_slope_(other.first_slope_),
      last_slope_(other.last_slope_) {
    if (x_.size() >= 2) locator_ = IntervalLocator(x_);
}

CubicSpline& CubicSpline::operator=(const CubicSpline& other) {
    if (this != &other) {
        CubicSpline copy(other);
        *this = std::move(copy);
    }
    return *this;
}

void CubicSpline::value_and_slope(double x, double& y, double& dy_dx) const {
    if (x <= x_.front()) {
        dy_dx = first_slope_;
        y = y_.front() + first_slope_ * (x - x_.front());
        return;
    }
    if (x >= x_.back()) {
        dy_dx = last_slope_;
        y = y_.back() + last_slope_ * (x - x_.back());
        return;
    }
    const std::size_t i = locator_.find(x);
    const double t = x - x_[i];
    y = pieces_[i].value(t);
    dy_dx = pieces_[i].slope(t);
}

void CubicSpline::piece_value(std::size_t piece, double x, double& y, double& dy_dx, double& d2y_dx2) const {
    if (piece == 0 || piece >= x_.size()) {
        const bool before = piece == 0;
        dy_dx = before ? first_slope_ : last_slope_;
        y = (before ? y_.front() : y_.back()) + dy_dx * (x - (before ? x_.front() : x_.back()));
        d2y_dx2 = 0.0;
        return;
    }
    const CubicPiece& p = pieces_[piece - 1];
    const double t = x - x_[piece - 1];
    y = p.value(t);
    dy_dx = p.slope(t);
    d2y_dx2 = p.curvature(t);
}

double CubicSpline::value(double x) const {
    double y, slope;
    value_and_slope(x, y, slope);
    return y;
}

double CubicSpline::minimum_on_knots() const {
    double lowest = std::numeric_limits<double>::infinity();
    for (std::size_t i = 0; i < pieces_.size(); ++i) {
        const CubicPiece& p = pieces_[i];
        const double h = x_[i + 1] - x_[i];
        lowest = std::min({lowest, y_[i], y_[i + 1]});
        // Interior extrema: roots of b + 2c t + 3d t² = 0 inside (0, h).
        const double qa = 3.0 * p.d, qb = 2.0 * p.c, qc = p.b;
        auto consider = [&](double t) {
            if (t > 0.0 && t < h) lowest = std::min(lowest, p.value(t));
        };
        if (std::abs(qa) < 1e-300) {
            if (qb != 0.0) consider(-qc / qb);
        } else {
            const double disc = qb * qb - 4.0 * qa * qc;
            if (disc >= 0.0) {
                const double root = std::sqrt(disc);
                consider((-qb + root) / (2.0 * qa));
                consider((-qb - root) / (2.0 * qa));
            }
        }
    }
    return lowest;
}

// ---------------------------------------------------------------------------------------------

MonotoneCubic::MonotoneCubic(std::vector<double> x, std::vector<double> y) : x_(std::move(x)), y_(std::move(y)) {
    const std::size_t n = x_.size();
    if (n < 2 || y_.size() != n) throw std::invalid_argument("MonotoneCubic needs two or more (x, y) pairs");
    for (std::size_t i = 1; i < n; ++i)
        if (!(x_[i] > x_[i - 1])) throw std::invalid_argument("MonotoneCubic knots must increase strictly");

    std::vector<double> h(n - 1), delta(n - 1);
    for (std::size_t i = 0; i + 1 < n; ++i) {
        h[i] = x_[i + 1] - x_[i];
        delta[i] = (y_[i + 1] - y_[i]) / h[i];
    }
    const std::vector<double> slope = fritsch_carlson_slopes(x_, y_);
    pieces_.resize(n - 1);
    for (std::size_t i = 0; i + 1 < n; ++i) {
        CubicPiece& p = pieces_[i];
        p.a = y_[i];
        p.b = slope[i];
        p.c = (3.0 * delta[i] - 2.0 * slope[i] - slope[i + 1]) / h[i];
        p.d = (slope[i] + slope[i + 1] - 2.0 * delta[i]) / (h[i] * h[i]);
    }
    locator_ = IntervalLocator(x_);
}

MonotoneCubic::MonotoneCubic(const MonotoneCubic& other) : x_(other.x_), y_(other.y_), pieces_(other.pieces_) {
    if (x_.size() >= 2) locator_ = IntervalLocator(x_);
}

MonotoneCubic& MonotoneCubic::operator=(const MonotoneCubic& other) {
    if (this != &other) {
        MonotoneCubic copy(other);
        *this = std::move(copy);
    }
    return *this;
}

double MonotoneCubic::value(double x) const {
    if (x <= x_.front()) return y_.front();
    if (x >= x_.back()) return y_.back();
    const std::size_t i = locator_.find(x);
    return pieces_[i].value(x - x_[i]);
}

}  // namespace firnray
