#include "model/table_smoothing.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <utility>

namespace firnray {

namespace {

// Beyond this many σ the Gaussian weight (about 1e-15 of the whole) changes nothing in a double.
constexpr double window_sigmas = 8.0;

double normal_cdf(double u) { return 0.5 * std::erfc(-u / std::numbers::sqrt2); }
double normal_pdf(double u) { return std::exp(-0.5 * u * u) / std::sqrt(2.0 * std::numbers::pi); }

// The table's curve continued beyond both ends by odd reflections. The continuation repeats
// with period 2L (L the depth span) and rises by 2(f_last − f_first) per period; each period is
// the table itself and its mirror image (reflected through the shallowest point).
class ReflectedCurve {
public:
    ReflectedCurve(const std::vector<double>& depth, const std::vector<double>& values)
        : depth_(depth), values_(values), span_(depth.back() - depth.front()),
          rise_(2.0 * (values.back() - values.front())) {}

    // Adds ∫ φ(u)(a + b u) du over every linear piece of the continued curve inside
    // [centre − wσ, centre + wσ], where u = (s − centre)/σ; returns the weighted sum and the weight.
    void accumulate(double centre, double sigma, double& sum, double& weight) const {
        const double low = centre - window_sigmas * sigma, high = centre + window_sigmas * sigma;
        const double d0 = depth_.front();
        const long first = static_cast<long>(std::floor((low - (2.0 * d0 - depth_.back())) / (2.0 * span_)));
        const long last = static_cast<long>(std::floor((high - (2.0 * d0 - depth_.back())) / (2.0 * span_)));
        for (long k = first; k <= last; ++k) {
            const double shift = 2.0 * span_ * static_cast<double>(k), lift = rise_ * static_cast<double>(k);
            // The table itself, shifted: s = d + shift, value f(d) + lift; only its pieces in the window.
            // Going down, each piece's lower knot is the next piece's upper knot.
            KnotCache upper, lower;
            const auto [first_in, last_in] = pieces_between(low - shift, high - shift);
            for (std::size_t i = first_in; i < last_in; ++i) {
                add_piece(depth_[i - 1] + shift, values_[i - 1] + lift, depth_[i] + shift, values_[i] + lift, centre,
                          sigma, low, high, sum, weight, upper, lower);
                std::swap(upper, lower);
            }
            // Its mirror image through (d0, f0), shifted: s = 2 d0 − d + shift, value 2 f0 − f(d) + lift.
            const double f0 = values_.front();
            const auto [first_mirror, last_mirror] = pieces_between(2.0 * d0 + shift - high, 2.0 * d0 + shift - low);
            // Mirrored, the order runs the other way: each piece's upper knot is the next one's lower knot.
            KnotCache start, end;
            for (std::size_t i = first_mirror; i < last_mirror; ++i) {
                add_piece(2.0 * d0 - depth_[i] + shift, 2.0 * f0 - values_[i] + lift, 2.0 * d0 - depth_[i - 1] + shift,
                          2.0 * f0 - values_[i - 1] + lift, centre, sigma, low, high, sum, weight, start, end);
                std::swap(start, end);
            }
        }
    }

private:
    // The pieces [depth[i-1], depth[i]] that overlap [from, to], as the range of i [first, last).
    std::pair<std::size_t, std::size_t> pieces_between(double from, double to) const {
        const auto begin = depth_.begin();
        const std::size_t first = static_cast<std::size_t>(std::upper_bound(begin, depth_.end(), from) - begin);
        const std::size_t last = static_cast<std::size_t>(std::lower_bound(begin, depth_.end(), to) - begin) + 1;
        return {std::max<std::size_t>(first, 1), std::min(last, depth_.size())};
    }

    // Φ and φ at the last knot evaluated: neighbouring pieces share a knot, so each knot's erfc and
    // exp are computed once (the same double, computed the same way, is recognised exactly).
    struct KnotCache {
        double u = std::numeric_limits<double>::quiet_NaN(), cdf = 0.0, pdf = 0.0;
        void at(double u_new, double& cdf_out, double& pdf_out) {
            if (u_new != u) {
                u = u_new;
                cdf = normal_cdf(u_new);
                pdf = normal_pdf(u_new);
            }
            cdf_out = cdf;
            pdf_out = pdf;
        }
    };

    static void add_piece(double s_a, double f_a, double s_b, double f_b, double centre, double sigma, double low,
                          double high, double& sum, double& weight, KnotCache& cache_a, KnotCache& cache_b) {
        if (s_b <= low || s_a >= high) return;
        const double slope = (f_b - f_a) / (s_b - s_a);
        const double u_a = (std::max(s_a, low) - centre) / sigma, u_b = (std::min(s_b, high) - centre) / sigma;
        // f = α + β u on this piece, with α the line's value at the centre and β = slope·σ.
        const double alpha = f_a + slope * (centre - s_a), beta = slope * sigma;
        double cdf_a, pdf_a, cdf_b, pdf_b;
        cache_a.at(u_a, cdf_a, pdf_a);
        cache_b.at(u_b, cdf_b, pdf_b);
        const double mass = cdf_b - cdf_a;
        sum += alpha * mass - beta * (pdf_b - pdf_a);
        weight += mass;
    }

    const std::vector<double>& depth_;
    const std::vector<double>& values_;
    double span_, rise_;
};

}  // namespace

std::vector<double> gaussian_smoothed(const std::vector<double>& depth_m, const std::vector<double>& values,
                                      double smoothing_m) {
    const ReflectedCurve curve(depth_m, values);
    std::vector<double> smoothed(values.size());
    for (std::size_t i = 0; i < depth_m.size(); ++i) {
        double sum = 0.0, weight = 0.0;
        curve.accumulate(depth_m[i], smoothing_m, sum, weight);
        smoothed[i] = sum / weight;
    }
    // The reflections hold the end values exactly; say so in the numbers too, free of rounding.
    smoothed.front() = values.front();
    smoothed.back() = values.back();
    return smoothed;
}

}  // namespace firnray
