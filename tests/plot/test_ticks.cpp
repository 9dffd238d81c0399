// Tick positions and labels. Choosing 1-2-5 steps and widening the range to the outer ticks is
// common practice (Heckbert, "Nice numbers for graph labels", Graphics Gems, 1990); the expected
// tick lists below are worked out by hand.
#include <catch2/catch.hpp>

#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "plot/figure.hpp"
#include "plot/plot_detail.hpp"

using namespace firnray::plot;

namespace {

// Steps between consecutive ticks are all equal and of the form {1, 2, 5} x 10^k.
bool is_nice_step_sequence(const std::vector<double>& ticks) {
    if (ticks.size() < 2) return false;
    const double step = ticks[1] - ticks[0];
    if (!(step > 0)) return false;
    const double exponent = std::floor(std::log10(step) + 1e-9);
    const double mantissa = step / std::pow(10.0, exponent);
    const bool nice = std::abs(mantissa - 1) < 1e-5 || std::abs(mantissa - 2) < 1e-5 || std::abs(mantissa - 5) < 1e-5;
    for (std::size_t i = 1; i < ticks.size(); ++i)
        if (std::abs((ticks[i] - ticks[i - 1]) - step) > step * 1e-5) return false;
    return nice;
}

}  // namespace

TEST_CASE("nice_ticks: [0, 1] gives 0, 0.2, ..., 1 as the doubles nearest those decimals", "[plot][ticks]") {
    const auto t = nice_ticks(0.0, 1.0);
    REQUIRE(t.size() == 6);
    // Exact comparisons on purpose: 0.6 must be 0.6, not 3 * 0.2 = 0.6000000000000001.
    CHECK(t[0] == 0.0);
    CHECK(t[1] == 0.2);
    CHECK(t[2] == 0.4);
    CHECK(t[3] == 0.6);
    CHECK(t[4] == 0.8);
    CHECK(t[5] == 1.0);
}

TEST_CASE("nice_ticks: [-37.5, 0] is covered by -40, -30, -20, -10, 0", "[plot][ticks]") {
    CHECK(nice_ticks(-37.5, 0.0) == std::vector<double>{-40, -30, -20, -10, 0});
}

TEST_CASE("nice_ticks: familiar ranges", "[plot][ticks]") {
    CHECK(nice_ticks(0.0, 1000.0) == std::vector<double>{0, 200, 400, 600, 800, 1000});
    CHECK(nice_ticks(0.0, 1000.0, 11) == std::vector<double>{0, 100, 200, 300, 400, 500, 600, 700, 800, 900, 1000});
    CHECK(nice_ticks(-200.0, 50.0) == std::vector<double>{-200, -150, -100, -50, 0, 50});
    CHECK(nice_ticks(1.32, 1.78) == std::vector<double>{1.3, 1.4, 1.5, 1.6, 1.7, 1.8});
    // Reversed limits are the same range.
    CHECK(nice_ticks(0.0, -37.5) == nice_ticks(-37.5, 0.0));
}

TEST_CASE("nice_ticks: tiny and huge ranges keep 1-2-5 steps and cover the range", "[plot][ticks]") {
    for (const auto& [low, high] : {std::pair{1e-9, 5e-9}, std::pair{0.0, 3e12}, std::pair{-7e-15, 2e-15},
                                   std::pair{1e20, 4e20}, std::pair{1000.0, 1000.000001}, std::pair{-1e300, 1e300}}) {
        INFO(low << " .. " << high);
        const auto t = nice_ticks(low, high);
        REQUIRE(t.size() >= 3);
        CHECK(t.size() <= 11);
        CHECK(t.front() <= low);
        CHECK(t.back() >= high);
        CHECK(is_nice_step_sequence(t));
    }
    CHECK(nice_ticks(0.0, 3e12) == std::vector<double>{0, 5e11, 1e12, 1.5e12, 2e12, 2.5e12, 3e12});
    CHECK(nice_ticks(1e-9, 5e-9) == std::vector<double>{1e-9, 2e-9, 3e-9, 4e-9, 5e-9});
}

TEST_CASE("nice_ticks: low == high gives ticks around the value", "[plot][ticks]") {
    for (double v : {5.0, 0.0, -3e-7, 1234.5}) {
        INFO(v);
        const auto t = nice_ticks(v, v);
        REQUIRE(t.size() >= 3);
        CHECK(t.front() < v);
        CHECK(t.back() > v);
        CHECK(is_nice_step_sequence(t));
    }
}

TEST_CASE("nice_ticks: non-finite input gives no ticks", "[plot][ticks]") {
    CHECK(nice_ticks(std::nan(""), 1.0).empty());
    CHECK(nice_ticks(0.0, INFINITY).empty());
}

TEST_CASE("nice_ticks: random ranges give about the asked number of nice, covering ticks", "[plot][ticks]") {
    std::mt19937_64 rng(12345);
    std::uniform_real_distribution<double> exponent(-12, 12), unit(-1, 1);
    for (int trial = 0; trial < 2000; ++trial) {
        const double scale = std::pow(10.0, exponent(rng));
        double low = unit(rng) * scale, high = unit(rng) * scale;
        if (low > high) std::swap(low, high);
        if (high - low < scale * 1e-6) continue;
        for (int target : {4, 6, 9}) {
            const auto t = nice_ticks(low, high, target);
            INFO(low << " .. " << high << " target " << target);
            REQUIRE(t.size() >= 2);
            CHECK(std::abs(static_cast<int>(t.size()) - target) <= 3);
            CHECK(t.front() <= low);
            CHECK(t.back() >= high);
            CHECK(is_nice_step_sequence(t));
        }
    }
}

TEST_CASE("inner ticks of a fixed range lie inside it", "[plot][ticks]") {
    CHECK(detail::inner_ticks(-37.5, 0.0) == std::vector<double>{-30, -20, -10, 0});
    CHECK(detail::inner_ticks(0.0, 1000.0) == std::vector<double>{0, 200, 400, 600, 800, 1000});
    const auto t = detail::inner_ticks(0.37, 9.81);
    REQUIRE(t.size() >= 3);
    CHECK(t.front() >= 0.37);
    CHECK(t.back() <= 9.81);
}

TEST_CASE("logarithmic ticks: decades, or 1-2-5 within a short range", "[plot][ticks]") {
    CHECK(detail::log_ticks(0.05, 60.0) == std::vector<double>{0.1, 1, 10});
    CHECK(detail::log_ticks(1e-3, 1e3) == std::vector<double>{1e-3, 1e-2, 1e-1, 1, 10, 100, 1000});
    CHECK(detail::log_ticks(3.0, 40.0) == std::vector<double>{5, 10, 20});
    CHECK(detail::log_tick_label(1e-7) == "10\u207b\u2077");
    CHECK(detail::log_tick_label(0.01) == "0.01");
    CHECK(detail::log_tick_label(2e8) == "2\u00d710\u2078");
}

TEST_CASE("tick labels: as few digits as the step needs, never rounding noise", "[plot][ticks]") {
    CHECK(tick_labels({0.0, 0.1, 0.2, 0.30000000000000004}) == std::vector<std::string>{"0.0", "0.1", "0.2", "0.3"});
    CHECK(tick_labels(nice_ticks(0.0, 1.0)) == std::vector<std::string>{"0.0", "0.2", "0.4", "0.6", "0.8", "1.0"});
    CHECK(tick_labels({0.0, 0.25, 0.5}) == std::vector<std::string>{"0.00", "0.25", "0.50"});
    CHECK(tick_labels({0, 1000, 2000, 3000}) == std::vector<std::string>{"0", "1000", "2000", "3000"});
    CHECK(tick_labels({0, 250000, 500000}) == std::vector<std::string>{"0", "250000", "500000"});
    CHECK(tick_labels({1.3, 1.4, 1.5}) == std::vector<std::string>{"1.3", "1.4", "1.5"});
}

TEST_CASE("tick labels: a true minus sign, and no negative zero", "[plot][ticks]") {
    CHECK(tick_labels({-10, -5, 0, 5}) == std::vector<std::string>{"\u221210", "\u22125", "0", "5"});
    CHECK(tick_labels({-0.0, 1.0}) == std::vector<std::string>{"0", "1"});
    // A tick that should be zero but carries rounding residue.
    CHECK(tick_labels({-0.2, -1e-17, 0.2}) == std::vector<std::string>{"\u22120.2", "0.0", "0.2"});
}

TEST_CASE("tick labels: powers of ten for very small and very large values", "[plot][ticks]") {
    CHECK(tick_labels({0, 2e-5, 4e-5}) ==
          std::vector<std::string>{"0", "2\u00d710\u207b\u2075", "4\u00d710\u207b\u2075"});
    CHECK(tick_labels({0, 5e6, 1e7, 1.5e7}) ==
          std::vector<std::string>{"0", "5\u00d710\u2076", "1\u00d710\u2077", "1.5\u00d710\u2077"});
    CHECK(tick_labels({}).empty());
}
