// Source reconstruction: exact multilateration in a homogeneous medium (any geometry textbook),
// the fit's covariance against the linearised least-squares covariance built from straight-line
// geometry (Gauss–Markov theorem), pulls and χ² over synthetic events (normal distribution and
// χ² distribution: mean ndof), and the assignment of unlabelled pulses to paths.
#include <catch2/catch.hpp>

#include <cmath>
#include <random>

#include <Eigen/Dense>

#include "core/constants.hpp"
#include "locate/resolution_map.hpp"
#include "locate/source_fit.hpp"
#include "locate/locate_test_support.hpp"
#include "model/model_file.hpp"
#include "solver/closed_form_solver.hpp"
#include "support/straight_line_solver.hpp"

using namespace firnray;

namespace {

double apart(const Point& a, const Point& b) { return std::hypot(a.x - b.x, a.y - b.y, a.z - b.z); }

std::shared_ptr<const FirnModel> firn() { return std::make_shared<const FirnModel>(default_model()); }

}  // namespace

TEST_CASE("noise-free times in a homogeneous medium give the exact source (multilateration, any geometry textbook)",
          "[locate]") {
    ClosedFormSolver solver(test::homogeneous_model(1.78));
    const Station station = test::three_string_station();
    const SourceLocator locator(solver, station, test::small_search_options());
    std::mt19937_64 rng(1);
    for (const Point source : {Point{300.0, 120.0, -150.0}, Point{-80.0, 40.0, -70.0}, Point{50.0, -700.0, -350.0}}) {
        const ArrivalEvent event = test::synthetic_event(solver, station, source, 0.0, 250.0, rng);
        const EventFit fit = locator.fit(event);
        REQUIRE(fit.error.empty());
        REQUIRE(fit.best);
        CHECK(apart(fit.best->position, source) < 1e-4);
        CHECK(fit.best->emission_time_ns == Approx(250.0).margin(1e-6));
        CHECK(fit.best->chi2 < 1e-8);
        CHECK(fit.best->ndof == static_cast<int>(event.pulses.size()) - 4);
    }
}

TEST_CASE("fit and Fisher covariances equal the linearised least-squares covariance from straight-line geometry "
          "(Gauss-Markov theorem)",
          "[locate]") {
    const double n = 1.78;
    ClosedFormSolver solver(test::homogeneous_model(n));
    const Station station = test::three_string_station();
    const Point source{260.0, -90.0, -170.0};
    const double sigma_ns = 0.7;

    // Independent design matrix: direct path to each receiver and the surface reflection (a
    // straight line to the receiver's mirror image above the surface), ∂T/∂source = n/c · unit vector.
    std::vector<Eigen::Vector4d> rows;
    for (const Receiver& r : station.receivers)
        for (const double image_z : {r.z_m, -r.z_m}) {
            const Eigen::Vector3d d(source.x - r.x_m, source.y - r.y_m, source.z - image_z);
            const Eigen::Vector3d g = n / speed_of_light * 1e9 * d / d.norm();
            rows.emplace_back(g.x(), g.y(), g.z(), 1.0);
        }
    Eigen::Matrix4d information = Eigen::Matrix4d::Zero();
    for (const auto& row : rows) information += row * row.transpose() / (sigma_ns * sigma_ns);
    const Eigen::Matrix4d expected = information.inverse();

    FisherOptions fisher;
    fisher.timing_sigma_ns = sigma_ns;
    const CramerRao bound = cramer_rao_bound(solver, station.receivers, source, station_centre(station.receivers), fisher);
    REQUIRE(bound.resolved);
    CHECK(bound.pulses == 24);

    for (int i = 0; i < 3; ++i)
        for (int j = 0; j < 3; ++j) {
            const double scale = std::sqrt(expected(i, i) * expected(j, j));
            CHECK(bound.covariance_m2[i][j] == Approx(expected(i, j)).margin(1e-9 * scale));
        }
    // The fit of noise-free times, each with the σ the bound assumed: its (Jᵀ W J)⁻¹ at the minimum.
    const SourceLocator locator(solver, station, test::small_search_options());
    std::mt19937_64 rng(2);
    ArrivalEvent event = test::synthetic_event(solver, station, source, 0.0, 0.0, rng);
    for (MeasuredPulse& p : event.pulses) p.sigma_s = sigma_ns * 1e-9;
    const EventFit scaled = locator.fit(event);
    REQUIRE(scaled.best);
    for (int i = 0; i < 3; ++i)
        for (int j = 0; j < 3; ++j)
            CHECK(scaled.best->covariance_m2[i][j] ==
                  Approx(expected(i, j)).margin(1e-6 * std::sqrt(expected(i, i) * expected(j, j))));
}

TEST_CASE("over 500 noisy events the pulls of x, y, z have unit spread and the mean chi2 is ndof (normal and "
          "chi-squared distributions)",
          "[locate][statistics]") {
    ClosedFormSolver solver(firn());
    const Station station = test::three_string_station();
    const SourceLocator locator(solver, station, test::small_search_options());
    std::mt19937_64 rng(20261203);
    std::uniform_real_distribution<double> distance(80.0, 500.0), azimuth(0.0, 2.0 * pi), depth(30.0, 250.0);
    const double sigma_ns = 0.5;
    std::vector<ArrivalEvent> events;
    std::vector<Point> truths;
    while (events.size() < 500) {
        const double r = distance(rng), a = azimuth(rng);
        const Point source{20.0 + r * std::cos(a), 11.5 + r * std::sin(a), -depth(rng)};
        ArrivalEvent event = test::synthetic_event(solver, station, source, sigma_ns, 100.0, rng);
        if (event.pulses.size() < 12) continue;  // mostly in the shadow: not what this test is about
        events.push_back(std::move(event));
        truths.push_back(source);
    }
    const auto fits = locate_events(locator, events, 2, {});
    double pull_sum[3] = {}, pull_squares[3] = {}, chi2_sum = 0.0, ndof_sum = 0.0;
    for (std::size_t i = 0; i < fits.size(); ++i) {
        INFO("event " << i);
        REQUIRE(fits[i].best);
        const SourceFit& f = *fits[i].best;
        const double fitted[3] = {f.position.x, f.position.y, f.position.z};
        const double truth[3] = {truths[i].x, truths[i].y, truths[i].z};
        for (int k = 0; k < 3; ++k) {
            const double pull = (fitted[k] - truth[k]) / std::sqrt(f.covariance_m2[k][k]);
            pull_sum[k] += pull;
            pull_squares[k] += pull * pull;
        }
        chi2_sum += f.chi2;
        ndof_sum += f.ndof;
    }
    const double count = static_cast<double>(fits.size());
    for (int k = 0; k < 3; ++k) {
        const double mean = pull_sum[k] / count;
        const double spread = std::sqrt(pull_squares[k] / count - mean * mean);
        INFO("coordinate " << k << ": pull mean " << mean << ", spread " << spread);
        CHECK(spread == Approx(1.0).margin(0.1));
        CHECK(std::abs(mean) < 0.15);
    }
    CHECK(chi2_sum / count == Approx(ndof_sum / count).epsilon(0.1));
}

TEST_CASE("the Cramer-Rao bound agrees with the spread of Monte Carlo reconstructions (Cramer-Rao inequality, "
          "efficient estimator)",
          "[locate][statistics]") {
    ClosedFormSolver solver(firn());
    const Station station = test::three_string_station();
    const SourceLocator locator(solver, station, test::small_search_options());
    const Point centre = station_centre(station.receivers);
    const double sigma_ns = 0.5;
    std::mt19937_64 rng(7);
    FisherOptions fisher;
    fisher.timing_sigma_ns = sigma_ns;
    for (const Point source : {Point{220.0, 60.0, -90.0}, Point{-150.0, 300.0, -200.0}, Point{400.0, -200.0, -140.0}}) {
        const CramerRao bound = cramer_rao_bound(solver, station.receivers, source, centre, fisher);
        REQUIRE(bound.resolved);
        std::vector<ArrivalEvent> events;
        for (int i = 0; i < 150; ++i) events.push_back(test::synthetic_event(solver, station, source, sigma_ns, 0.0, rng));
        REQUIRE(events.front().pulses.size() == static_cast<std::size_t>(bound.pulses));
        const auto fits = locate_events(locator, events, 2, {});
        double sum[3] = {}, squares[3] = {};
        for (const EventFit& f : fits) {
            REQUIRE(f.best);
            const double p[3] = {f.best->position.x, f.best->position.y, f.best->position.z};
            for (int k = 0; k < 3; ++k) sum[k] += p[k], squares[k] += p[k] * p[k];
        }
        for (int k = 0; k < 3; ++k) {
            const double mean = sum[k] / 150.0;
            const double spread = std::sqrt(squares[k] / 150.0 - mean * mean);
            INFO("source " << source.x << "," << source.y << "," << source.z << " coordinate " << k);
            CHECK(spread == Approx(std::sqrt(bound.covariance_m2[k][k])).epsilon(0.15));
        }
    }
}

TEST_CASE("unlabelled pulses are assigned to the right paths: both paths, one path only, a source in the air "
          "(synthetic events from the path finder)",
          "[locate]") {
    ClosedFormSolver solver(firn());
    const Station station = test::three_string_station();
    const SourceLocator locator(solver, station, test::small_search_options());
    std::mt19937_64 rng(11);

    SECTION("every channel has both paths") {
        const Point source{300.0, 150.0, -120.0};
        const EventFit fit = locator.fit(test::synthetic_event(solver, station, source, 0.3, 40.0, rng));
        REQUIRE(fit.best);
        CHECK(apart(fit.best->position, source) < 3.0);
        for (const AssignedPulse& p : fit.best->pulses) CHECK(std::abs(p.residual_ns) < 2.0);
    }
    SECTION("some channels only see the first path, some only the second") {
        const Point source{-250.0, 200.0, -160.0};
        const auto keep = [](std::size_t c) {
            return c % 3 == 0 ? test::KeepPulses::second_only
                   : c % 3 == 1 ? test::KeepPulses::first_only
                                : test::KeepPulses::first_two;
        };
        const ArrivalEvent event = test::synthetic_event(solver, station, source, 0.3, 0.0, rng, keep);
        const EventFit fit = locator.fit(event);
        REQUIRE(fit.best);
        CHECK(apart(fit.best->position, source) < 5.0);
        for (const AssignedPulse& p : fit.best->pulses) {
            INFO("channel " << p.channel);
            const bool alone = p.channel % 3 != 2;
            if (alone) CHECK(p.path_rank == (p.channel % 3 == 0 ? 2 : 1));
        }
    }
    SECTION("a source in the air: one transmitted path per channel") {
        const Point source{300.0, -100.0, 60.0};
        const ArrivalEvent event = test::synthetic_event(solver, station, source, 0.3, 0.0, rng);
        const EventFit fit = locator.fit(event);
        REQUIRE(fit.best);
        for (const AssignedPulse& p : fit.best->pulses) CHECK(p.kind == PathKind::transmitted);
        CHECK(fit.best->position.z > 0.0);
        // Seen from below the surface a source in the air is nearly a plane wave: its distance is the
        // poorly measured quantity, so the check is loose (1σ from the covariance is reported).
        CHECK(apart(fit.best->position, source) < 0.15 * 330.0);
    }
}

TEST_CASE("pulses from two strings only give a mirror solution across the plane of the strings (geometry)",
          "[locate]") {
    ClosedFormSolver solver(firn());
    Station station = test::three_string_station();
    station.receivers.resize(8);  // strings A and B, both on the x axis
    const SourceLocator locator(solver, station, test::small_search_options());
    std::mt19937_64 rng(5);
    const Point source{150.0, 180.0, -100.0};
    const EventFit fit = locator.fit(test::synthetic_event(solver, station, source, 0.0, 0.0, rng));
    REQUIRE(fit.best);
    REQUIRE(fit.alternatives.size() >= 1);
    const Point mirror{source.x, -source.y, source.z};
    // Either may come first (their χ² are equal): one is the source, the other its mirror.
    const Point& best = fit.best->position;
    const Point& other = fit.alternatives.front().position;
    const bool best_is_source = apart(best, source) < 0.5;
    CHECK((best_is_source || apart(best, mirror) < 0.5));
    CHECK(apart(other, best_is_source ? mirror : source) < 0.5);
}

TEST_CASE("the fit on the travel-time table equals the fit on exact paths to a small fraction of sigma (the exact fit "
          "as reference)",
          "[locate]") {
    const auto model = firn();
    const ClosedFormSolver solver(model);
    const Station station = test::three_string_station();
    LocateOptions interpolated = test::small_search_options(), exact = test::small_search_options();
    interpolated.travel_times = LocateOptions::TravelTimes::interpolated;
    exact.travel_times = LocateOptions::TravelTimes::exact;
    const SourceLocator on_table(solver, station, interpolated), on_paths(solver, station, exact);
    std::mt19937_64 rng(41);
    std::uniform_real_distribution<double> distance(60.0, 600.0), azimuth(0.0, 2.0 * pi), depth(20.0, 280.0);
    double worst = 0.0;
    for (int i = 0; i < 40; ++i) {
        const double r = distance(rng), a = azimuth(rng);
        const Point source{20.0 + r * std::cos(a), 11.5 + r * std::sin(a), -depth(rng)};
        const ArrivalEvent event = test::synthetic_event(solver, station, source, 0.5, 100.0, rng);
        const EventFit x = on_table.fit(event), y = on_paths.fit(event);
        REQUIRE(x.best.has_value() == y.best.has_value());
        if (!x.best) continue;
        CHECK(x.alternatives.size() == y.alternatives.size());
        CHECK(x.best->chi2 == Approx(y.best->chi2).margin(1e-3));
        const auto& c = y.best->covariance_m2;
        worst = std::max({worst, std::abs(x.best->position.x - y.best->position.x) / std::sqrt(c[0][0]),
                          std::abs(x.best->position.y - y.best->position.y) / std::sqrt(c[1][1]),
                          std::abs(x.best->position.z - y.best->position.z) / std::sqrt(c[2][2])});
        for (std::size_t k = 0; k < x.best->pulses.size(); ++k) {
            CHECK(x.best->pulses[k].kind == y.best->pulses[k].kind);
            CHECK(x.best->pulses[k].path_rank == y.best->pulses[k].path_rank);
        }
    }
    INFO("largest position difference " << worst << " sigma");
    CHECK(worst < 1e-3);
}
