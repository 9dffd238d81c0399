// Tick positions and tick labels: 1-2-5 steps, values computed from integers so that they are
// the doubles nearest to the decimal numbers they stand for, and labels with only the digits
// the step needs.
#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <string>
#include <vector>

#include "plot/figure.hpp"
#include "plot/plot_detail.hpp"

namespace firnray::plot {

namespace {

double power_of_ten(int k) {
    // Exact for |k| <= 22, where 10^k is a double; std::pow is close enough beyond.
    static const std::array<double, 23> exact = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                                 1e8,  1e9,  1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
                                                 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};
    if (k >= 0 && k <= 22) return exact[static_cast<std::size_t>(k)];
    if (k < 0 && k >= -22) return 1.0 / exact[static_cast<std::size_t>(-k)];
    return std::pow(10.0, k);
}

// i * m * 10^k as the double nearest to that decimal number (dividing by an exact power of ten
// rounds once, where multiplying by an inexact 10^-k would round twice: 3 * 0.1 != 0.3).
double tick_value(long long i, int m, int k) {
    const double whole = static_cast<double>(i) * m;
    if (k >= 0) return whole * power_of_ten(k);
    if (k >= -22) return whole / power_of_ten(-k);
    return whole * std::pow(10.0, k);
}

struct TickStep {
    int m = 1, k = 0;
    long long first = 0, last = -1;  // tick indices: values tick_value(i, m, k)
};

// The 1-2-5 step whose tick count is closest to target (ties: the larger step). `covering`
// selects ticks reaching just beyond [low, high]; otherwise ticks lying inside it.
TickStep choose_step(double low, double high, int target, bool covering) {
    const double raw = (high - low) / std::max(1, target - 1);
    const int k0 = static_cast<int>(std::floor(std::log10(raw)));
    TickStep best;
    int best_score = 1 << 30;
    for (int k = k0 - 1; k <= k0 + 1; ++k) {
        for (int m : {1, 2, 5}) {
            const double step = m * power_of_ten(k);
            const double q_low = low / step, q_high = high / step;
            // A tolerance relative to the index absorbs rounding in the division.
            const double tol_low = 1e-7 + std::abs(q_low) * 1e-12, tol_high = 1e-7 + std::abs(q_high) * 1e-12;
            long long first, last;
            if (covering) {
                first = static_cast<long long>(std::floor(q_low + tol_low));
                last = static_cast<long long>(std::ceil(q_high - tol_high));
            } else {
                first = static_cast<long long>(std::ceil(q_low - tol_low));
                last = static_cast<long long>(std::floor(q_high + tol_high));
            }
            const long long count = last - first + 1;
            if (count < 1 || count > 1000) continue;
            const int score = static_cast<int>(std::abs(count - target));
            // Candidates come in increasing step order, so "<=" keeps the larger step on ties.
            if (score <= best_score) {
                best_score = score;
                best = {m, k, first, last};
            }
        }
    }
    return best;
}

// Widens a degenerate range (low == high, or a span lost in rounding) around its centre.
void widen_if_degenerate(double& low, double& high) {
    const double magnitude = std::max(std::abs(low), std::abs(high));
    if (high - low > magnitude * 1e-12 && high > low) return;
    const double centre = 0.5 * (low + high);
    const double half = centre == 0.0 ? 1.0 : std::abs(centre) * 0.1;
    low = centre - half;
    high = centre + half;
}

std::vector<double> ticks_from(const TickStep& s) {
    std::vector<double> ticks;
    for (long long i = s.first; i <= s.last; ++i) ticks.push_back(tick_value(i, s.m, s.k));
    return ticks;
}

// Fewest decimals that show every value to within a small fraction of the step.
int decimals_needed(const std::vector<double>& values, double step) {
    const double tolerance = std::abs(step) * 1e-3;
    for (int d = 0; d <= 17; ++d) {
        const double scale = power_of_ten(d);
        bool ok = true;
        for (double v : values) {
            if (std::abs(std::round(v * scale) / scale - v) > tolerance) {
                ok = false;
                break;
            }
        }
        if (ok) return d;
    }
    return 17;
}

std::string fixed(double v, int decimals) {
    char buffer[400];
    std::snprintf(buffer, sizeof buffer, "%.*f", decimals, v);
    return buffer;
}

// A typographic minus sign instead of a hyphen, and no "-0".
std::string with_minus_sign(std::string text) {
    if (!text.empty() && text[0] == '-') {
        if (text.find_first_not_of("-0.") == std::string::npos) return text.substr(1);
        return "\u2212" + text.substr(1);
    }
    return text;
}

std::string superscript(int exponent) {
    static const char* digits[] = {"\u2070", "\u00b9", "\u00b2", "\u00b3", "\u2074",
                                   "\u2075", "\u2076", "\u2077", "\u2078", "\u2079"};
    std::string out = exponent < 0 ? "\u207b" : "";
    const std::string plain = std::to_string(std::abs(exponent));
    for (char c : plain) out += digits[c - '0'];
    return out;
}

int decade_of(double v) {
    int e = static_cast<int>(std::floor(std::log10(std::abs(v))));
    // log10 may land just below an exact power of ten.
    if (std::abs(v) >= power_of_ten(e + 1)) ++e;
    if (std::abs(v) < power_of_ten(e)) --e;
    return e;
}

// "m×10ᵉ" with only the mantissa digits the step needs.
std::string scientific_label(double v, double step) {
    const int e = decade_of(v);
    const double mantissa = v / power_of_ten(e);
    const int d = decimals_needed({mantissa}, step / power_of_ten(e));
    return with_minus_sign(fixed(mantissa, d)) + "\u00d7" + "10" + superscript(e);
}

}  // namespace

std::vector<double> nice_ticks(double low, double high, int target) {
    if (!std::isfinite(low) || !std::isfinite(high)) return {};
    if (low > high) std::swap(low, high);
    if (!std::isfinite(high - low)) return {low, high};
    target = std::clamp(target, 2, 50);
    widen_if_degenerate(low, high);
    return ticks_from(choose_step(low, high, target, true));
}

std::vector<std::string> tick_labels(const std::vector<double>& ticks) {
    std::vector<std::string> labels;
    if (ticks.empty()) return labels;
    double step = 0.0, largest = 0.0;
    for (std::size_t i = 0; i < ticks.size(); ++i) {
        largest = std::max(largest, std::abs(ticks[i]));
        if (i > 0) {
            const double gap = std::abs(ticks[i] - ticks[i - 1]);
            if (gap > 0 && (step == 0.0 || gap < step)) step = gap;
        }
    }
    if (step == 0.0) step = largest > 0 ? largest : 1.0;
    const bool scientific = largest >= 1e6 || (largest > 0 && largest < 1e-3);
    if (!scientific) {
        const int d = decimals_needed(ticks, step);
        for (double v : ticks) {
            if (std::abs(v) < step * 1e-6) v = 0.0;
            labels.push_back(with_minus_sign(fixed(v, d)));
        }
    } else {
        for (double v : ticks) {
            if (std::abs(v) < step * 1e-6) labels.push_back("0");
            else labels.push_back(scientific_label(v, step));
        }
    }
    return labels;
}

namespace detail {

std::vector<double> inner_ticks(double low, double high, int target) {
    if (!std::isfinite(low) || !std::isfinite(high)) return {};
    if (low > high) std::swap(low, high);
    if (!std::isfinite(high - low)) return {low, high};
    widen_if_degenerate(low, high);
    return ticks_from(choose_step(low, high, std::clamp(target, 2, 50), false));
}

std::vector<double> log_ticks(double low, double high) {
    if (!(low > 0) || !(high > low) || !std::isfinite(high)) return inner_ticks(low, high);
    const double tol = 1e-9;
    const int first = static_cast<int>(std::ceil(std::log10(low) - tol));
    const int last = static_cast<int>(std::floor(std::log10(high) + tol));
    std::vector<double> ticks;
    const int decades = last - first + 1;
    const int every = decades > 12 ? (decades + 5) / 6 : 1;  // thin out very wide scales
    for (int e = first; e <= last; e += every) ticks.push_back(power_of_ten(e));
    if (ticks.size() >= 3) return ticks;
    ticks.clear();
    for (int e = first - 1; e <= last; ++e) {
        for (int m : {1, 2, 5}) {
            const double value = tick_value(m, 1, e);
            if (value >= low * (1 - tol) && value <= high * (1 + tol)) ticks.push_back(value);
        }
    }
    if (ticks.size() >= 3) return ticks;
    return inner_ticks(low, high, 5);
}

std::string log_tick_label(double value) {
    if (!(value > 0)) return tick_labels({value}).front();
    if (value >= 1e-3 && value < 1e6) return tick_labels({value}).front();
    const int e = decade_of(value);
    const double mantissa = value / power_of_ten(e);
    if (std::abs(mantissa - 1.0) < 1e-9) return "10" + superscript(e);
    return scientific_label(value, value * 1e-3);
}

}  // namespace detail

}  // namespace firnray::plot
