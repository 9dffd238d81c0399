// The travel-time table of the fit (locate/travel_time_table.hpp) against the exact path finder:
// times, the gradient ∇_source T = −n/c · launch direction (Fermat's principle, common
// practice) and the places where the table must hand over to find_paths.
#include <catch2/catch.hpp>

#include <cmath>
#include <random>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "locate/travel_time_table.hpp"
#include "model/model_file.hpp"
#include "solver/make_solver.hpp"
#include "support/run_cli.hpp"

using namespace firnray;

namespace {

std::vector<Receiver> one_string() {
    std::vector<Receiver> receivers;
    for (int k = 0; k < 4; ++k) {
        Receiver r;
        r.name = "A" + std::to_string(k + 1);
        r.string_name = "A";
        r.x_m = 3.0;
        r.y_m = -2.0;
        r.z_m = -40.0 - 20.0 * k;
        receivers.push_back(r);
    }
    return receivers;
}

TravelTimeTableOptions small_table() {
    TravelTimeTableOptions options;
    options.deepest_m = 320.0;
    options.max_distance_m = 700.0;
    options.threads = 2;
    return options;
}

struct Agreement {
    int pairs = 0, answered = 0;
    double worst_time_ns = 0.0, worst_gradient_ns_per_m = 0.0;
};

// Random sources from 2 to 600 m away and 0 to 300 m deep, against find_paths.
Agreement compare(const RaySolver& solver, const TravelTimeTable& table, const std::vector<Receiver>& receivers,
                  int pairs) {
    std::mt19937_64 rng(17);
    std::uniform_real_distribution<double> distance(2.0, 600.0), azimuth(0.0, 2.0 * pi), depth(0.0, 300.0);
    Agreement out;
    std::vector<TabulatedPath> tabulated;
    for (int i = 0; i < pairs; ++i) {
        const std::size_t c = static_cast<std::size_t>(i) % receivers.size();
        const Receiver& r = receivers[c];
        const double rho = distance(rng), a = azimuth(rng);
        const Point source{r.x_m + rho * std::cos(a), r.y_m + rho * std::sin(a), -depth(rng)};
        const auto exact = find_paths(solver, source, Point{r.x_m, r.y_m, r.z_m});
        ++out.pairs;
        if (!table.paths(c, source, tabulated)) continue;
        ++out.answered;
        REQUIRE(tabulated.size() == exact.size());
        const double slowness = solver.model().index_at(source.z) / speed_of_light;
        for (std::size_t k = 0; k < exact.size(); ++k) {
            const ConnectedPath& p = exact[k];
            out.worst_time_ns = std::max(out.worst_time_ns, std::abs(tabulated[k].time_s - p.time_s) * 1e9);
            const double horizontal = std::sin(p.launch_zenith_rad);
            const double dx = -slowness * horizontal * std::cos(p.azimuth_rad);
            const double dy = -slowness * horizontal * std::sin(p.azimuth_rad);
            const double dz = -slowness * std::cos(p.launch_zenith_rad);
            const auto& g = tabulated[k].gradient;
            out.worst_gradient_ns_per_m =
                std::max(out.worst_gradient_ns_per_m, std::hypot(g.dx - dx, g.dy - dy, g.dz - dz) * 1e9);
        }
    }
    return out;
}

}  // namespace

TEST_CASE("travel-time table agrees with find_paths within 0.01 ns on the exponential model (Fermat gradient, common "
          "practice)",
          "[locate][travel_time_table]") {
    const auto model = std::make_shared<const FirnModel>(default_model());
    const auto solver = make_solver(model, SolverChoice::automatic);
    const auto receivers = one_string();
    const TravelTimeTable table(*solver, receivers, small_table());
    const Agreement a = compare(*solver, table, receivers, 1200);
    INFO("answered " << a.answered << " of " << a.pairs << ", worst time " << a.worst_time_ns << " ns, worst gradient "
                     << a.worst_gradient_ns_per_m << " ns/m");
    CHECK(a.worst_time_ns < 0.01);
    CHECK(a.worst_gradient_ns_per_m < 0.03);  // of about 6 ns/m
    CHECK(a.answered >= 0.9 * a.pairs);       // the rest: near a receiver, a fold or a shadow boundary
}

TEST_CASE("travel-time table agrees with find_paths within 0.01 ns on a tabulated density log (Fermat gradient, "
          "common practice)",
          "[locate][travel_time_table]") {
    const auto model = std::make_shared<const FirnModel>(load_model_file(test::source_path("models/table-density.toml")));
    const auto solver = make_solver(model, SolverChoice::automatic);
    const auto receivers = one_string();
    const TravelTimeTable table(*solver, receivers, small_table());
    const Agreement a = compare(*solver, table, receivers, 160);
    INFO("answered " << a.answered << " of " << a.pairs << ", worst time " << a.worst_time_ns << " ns, worst gradient "
                     << a.worst_gradient_ns_per_m << " ns/m");
    CHECK(a.worst_time_ns < 0.01);
    CHECK(a.worst_gradient_ns_per_m < 0.03);
    CHECK(a.answered >= 0.8 * a.pairs);
}

TEST_CASE("travel-time table leaves sources in the air, beyond it or at a receiver to find_paths",
          "[locate][travel_time_table]") {
    const auto model = std::make_shared<const FirnModel>(default_model());
    const auto solver = make_solver(model, SolverChoice::automatic);
    const auto receivers = one_string();
    const TravelTimeTable table(*solver, receivers, small_table());
    std::vector<TabulatedPath> paths;
    CHECK(table.paths(0, Point{100.0, 0.0, -50.0}, paths));
    CHECK_FALSE(table.paths(0, Point{100.0, 0.0, 5.0}, paths));      // in the air
    CHECK_FALSE(table.paths(0, Point{100.0, 0.0, -400.0}, paths));   // below its deepest depth
    CHECK_FALSE(table.paths(0, Point{900.0, 0.0, -50.0}, paths));    // beyond its largest distance
    CHECK_FALSE(table.paths(0, Point{4.0, -2.0, -41.0}, paths));     // next to the receiver
    CHECK(paths.empty());
    CHECK_FALSE(table.paths(7, Point{100.0, 0.0, -50.0}, paths));    // no such receiver
    // Levels are dense next to the receiver's depth and sparse far from it.
    const auto levels = table.source_levels(0);
    REQUIRE(levels.size() > 2);
    CHECK(levels.front() == 0.0);
    CHECK(levels.back() == -320.0);
    CHECK(table.distances(0).back() == 700.0);
}

TEST_CASE("travel-time table refuses bad options with the field named", "[locate][travel_time_table]") {
    const auto model = std::make_shared<const FirnModel>(default_model());
    const auto solver = make_solver(model, SolverChoice::automatic);
    const auto receivers = one_string();
    TravelTimeTableOptions options = small_table();
    options.spacing_fraction = 0.0;
    CHECK_THROWS_AS(TravelTimeTable(*solver, receivers, options), DataInputError);
    options = small_table();
    options.deepest_m = std::nan("");
    CHECK_THROWS_WITH(TravelTimeTable(*solver, receivers, options), Catch::Contains("must be above 0 m"));
    options = small_table();
    options.min_spacing_m = 0.0;
    CHECK_THROWS_AS(TravelTimeTable(*solver, receivers, options), DataInputError);
}
