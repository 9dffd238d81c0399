// locate --uncertainty: the profile's part of a fitted source position. In uniform ice a source
// straight below a string of a symmetric station moves only in depth when n changes, by the
// amount the normal equations of the least-squares fit give (implicit-function theorem); Monte
// Carlo refits give the same for any thread count; a model without [uncertainty] is refused.
#include <cmath>
#include <string>

#include <Eigen/Dense>
#include <catch2/catch.hpp>

#include "core/constants.hpp"
#include "model/model_file.hpp"
#include "paths/find_paths.hpp"
#include "solver/make_solver.hpp"
#include "io/csv_reader.hpp"
#include "station/station.hpp"
#include "support/json_reader.hpp"
#include "support/run_cli.hpp"
#include "uncertainty/locate_uncertainty.hpp"

using namespace firnray;
using namespace firnray::test;

namespace {

constexpr double n_ice = 1.78, sigma_n = 0.005, pulse_sigma_s = 0.5e-9;

FirnModel uniform_ice() {
    return parse_model("[index]\nkind = \"constant\"\nn = 1.78\n"
                       "[uncertainty]\nparameters = [\"n\"]\ncovariance = [[2.5e-5]]\n",
                       "uniform.toml");
}

// A string at the centre and four around it at 30 m, receivers at 60 and 90 m depth.
std::string symmetric_station_text() {
    std::string text = "name = \"cross\"\n";
    const double xy[5][2] = {{0, 0}, {30, 0}, {-30, 0}, {0, 30}, {0, -30}};
    for (int s = 0; s < 5; ++s) {
        text += "[[string]]\nname = \"S" + std::to_string(s) + "\"\nx_m = " + std::to_string(xy[s][0]) +
                "\ny_m = " + std::to_string(xy[s][1]) + "\n";
        for (int d : {60, 90})
            text += "[[string.receiver]]\nname = \"S" + std::to_string(s) + "_" + std::to_string(d) +
                    "\"\ndepth_m = " + std::to_string(d) + "\n";
    }
    return text;
}

Station symmetric_station() { return parse_station(symmetric_station_text(), "cross.toml"); }

// The first arrival at every channel (the straight path), emitted at t = 0, without noise.
ArrivalEvent event_from(const FirnModel& model, const Station& station, const Point& source) {
    const auto solver = make_solver(std::make_shared<FirnModel>(model), SolverChoice::automatic);
    ArrivalEvent event;
    event.name = "below-centre";
    event.first_line = 2;
    for (std::size_t k = 0; k < station.receivers.size(); ++k) {
        const Receiver& r = station.receivers[k];
        const auto paths = find_paths(*solver, source, Point{r.x_m, r.y_m, r.z_m});
        REQUIRE(!paths.empty());
        event.pulses.push_back({k, paths.front().time_s, pulse_sigma_s, static_cast<int>(k) + 2});
    }
    return event;
}

struct Fitted {
    std::vector<ArrivalEvent> events;
    std::vector<EventFit> fits;
};

Fitted nominal_fit(const FirnModel& model, const Station& station, const LocateRefitSetup& setup,
                   const Point& source) {
    Fitted f;
    f.events.push_back(event_from(model, station, source));
    const auto solver = make_solver(std::make_shared<FirnModel>(model), setup.solver);
    const SourceLocator locator(*solver, station, setup.options);
    f.fits = locate_events(locator, f.events, 1, {});
    return f;
}

}  // namespace

TEST_CASE("locate profile part in uniform ice moves a source below a string in depth only, by the normal-equations "
          "amount (implicit-function theorem for least squares, t = nL/c)",
          "[uncertainty][locate]") {
    const FirnModel model = uniform_ice();
    const Station station = symmetric_station();
    const Point source{0.0, 0.0, -200.0};
    LocateRefitSetup setup;
    const Fitted nominal = nominal_fit(model, station, setup, source);
    REQUIRE(nominal.fits.front().best);
    const SourceFit& best = *nominal.fits.front().best;
    CHECK(best.position.z == Approx(-200.0).margin(1e-3));

    // The closed form: rows ∂t_i/∂(x, y, z, t0) = (n/c û_i, 1) with û the unit vector from the
    // receiver to the source; a change δn of the index changes every predicted time by L_i δn / c,
    // and the refit moves by -(JᵀJ)⁻¹ Jᵀ L δn / c (equal weights).
    Eigen::MatrixXd jacobian(static_cast<Eigen::Index>(station.receivers.size()), 4);
    Eigen::VectorXd lengths(static_cast<Eigen::Index>(station.receivers.size()));
    for (std::size_t k = 0; k < station.receivers.size(); ++k) {
        const Receiver& r = station.receivers[k];
        const Eigen::Vector3d d(source.x - r.x_m, source.y - r.y_m, source.z - r.z_m);
        const auto row = static_cast<Eigen::Index>(k);
        jacobian.block<1, 3>(row, 0) = (n_ice / speed_of_light) * d.normalized().transpose();
        jacobian(row, 3) = 1.0;
        lengths(row) = d.norm();
    }
    const Eigen::Vector4d shift_per_n =
        -(jacobian.transpose() * jacobian).ldlt().solve(jacobian.transpose() * lengths / speed_of_light);
    CHECK(std::abs(shift_per_n(0)) < 1e-6);
    CHECK(std::abs(shift_per_n(1)) < 1e-6);
    const double expected_sigma_z = std::abs(shift_per_n(2)) * sigma_n;
    REQUIRE(expected_sigma_z > 0.5);  // a shift worth checking: metres

    const ModelPerturbation perturbation(model);
    const auto spreads =
        profile_position_spreads(perturbation, setup, station, nominal.events, nominal.fits, PropagationOptions{});
    REQUIRE(spreads.front());
    const ProfilePositionSpread& spread = *spreads.front();
    CHECK(spread.defined);
    CHECK(spread.models == 2);
    CHECK(spread.absent == 0);
    CHECK(spread.matching_changed == 0);
    INFO("closed form " << expected_sigma_z << " m, refits " << std::sqrt(spread.covariance_m2[2][2]) << " m");
    CHECK(std::sqrt(spread.covariance_m2[2][2]) == Approx(expected_sigma_z).epsilon(0.02));
    CHECK(std::sqrt(spread.covariance_m2[0][0]) < 1e-3 * expected_sigma_z);
    CHECK(std::sqrt(spread.covariance_m2[1][1]) < 1e-3 * expected_sigma_z);
    CHECK(spread.profile.sigma_depth_m == Approx(expected_sigma_z).epsilon(0.02));
    // combined: the timing part and the profile part add
    CHECK(spread.combined.sigma_depth_m ==
          Approx(std::sqrt(best.covariance_m2[2][2] + spread.covariance_m2[2][2])).epsilon(1e-9));
}

TEST_CASE("locate profile part by Monte Carlo refits is the same for 1 and 2 threads (JCGM 101 2008, reproducible draws)",
          "[uncertainty][locate]") {
    const FirnModel model = uniform_ice();
    const Station station = symmetric_station();
    LocateRefitSetup setup;
    const Fitted nominal = nominal_fit(model, station, setup, Point{60.0, 20.0, -150.0});
    REQUIRE(nominal.fits.front().best);
    const ModelPerturbation perturbation(model);
    PropagationOptions options;
    options.method = PropagationMethod::monte_carlo;
    options.samples = 6;
    options.threads = 1;
    const auto one = profile_position_spreads(perturbation, setup, station, nominal.events, nominal.fits, options);
    options.threads = 2;
    const auto two = profile_position_spreads(perturbation, setup, station, nominal.events, nominal.fits, options);
    REQUIRE(one.front());
    REQUIRE(two.front());
    CHECK(one.front()->covariance_m2 == two.front()->covariance_m2);
    CHECK(one.front()->models == 6);
    CHECK(one.front()->covariance_m2[2][2] > 0.0);
}

TEST_CASE("locate with uncertainty refuses a model without an uncertainty table (exit 3)", "[uncertainty][locate][cli]") {
    const CliResult r = run_firnray({"locate", "--station", source_path("demo/station.toml"), "--arrivals",
                                     source_path("demo/locate-events.csv"), "--uncertainty", "--quiet"});
    CHECK(r.exit_code == 3);
    CHECK_THAT(r.err, Catch::Contains("has no [uncertainty] table"));
    CHECK(r.out.empty());
}

TEST_CASE("locate JSON and CSV with uncertainty carry the profile part beside the timing part (the interface)",
          "[uncertainty][locate][cli]") {
    const FirnModel model = uniform_ice();
    const Station station = symmetric_station();
    const ArrivalEvent event = event_from(model, station, Point{0.0, 0.0, -200.0});
    const std::string folder = temp_folder("locate-uncertainty");
    const std::string model_path = write_file(folder + "/uniform.toml",
                                              "[index]\nkind = \"constant\"\nn = 1.78\n"
                                              "[uncertainty]\nparameters = [\"n\"]\ncovariance = [[2.5e-5]]\n");
    const std::string station_path = write_file(folder + "/cross.toml", symmetric_station_text());
    std::string arrivals = "event,channel,time_ns\n";
    for (const MeasuredPulse& p : event.pulses)
        arrivals += "below," + station.receivers[p.channel].name + "," + std::to_string(p.time_s * 1e9) + "\n";
    const std::string arrivals_path = write_file(folder + "/arrivals.csv", arrivals);
    const CliResult json = run_firnray({"locate", "--model", model_path, "--station", station_path, "--arrivals",
                                        arrivals_path, "--format", "json", "--uncertainty", "--quiet"});
    INFO(json.err);
    REQUIRE(json.exit_code == 0);
    const JsonValue doc = parse_json(json.out);
    CHECK(doc["uncertainty"]["method"].str() == "linearised");
    const JsonValue& e = doc["events"][0];
    CHECK(e["profile_models"].num() == 2);
    CHECK(e["profile_absent_models"].num() == 0);
    const double profile_depth = e["sigma_depth_profile_m"].num(), timing_depth = e["sigma_depth_m"].num();
    CHECK(profile_depth > 0.5);
    CHECK(e["sigma_depth_combined_m"].num() == Approx(std::hypot(profile_depth, timing_depth)).epsilon(1e-9));
    CHECK(std::sqrt(e["covariance_profile_m2"][2][2].num()) == Approx(profile_depth).epsilon(1e-9));
    CHECK(e.has("sigma_azimuth_profile_deg"));

    const CliResult csv = run_firnray({"locate", "--model", model_path, "--station", station_path, "--arrivals",
                                       arrivals_path, "--format", "csv", "--uncertainty", "--quiet"});
    REQUIRE(csv.exit_code == 0);
    CHECK_THAT(csv.out, Catch::StartsWith("# uncertainty: profile part, linearised"));
    const CsvTable table = read_csv(write_file(folder + "/fits.csv", csv.out));
    REQUIRE(table.rows.size() == 1);
    CHECK(table.number(table.rows[0], table.column("sigma_depth_profile_m")) == Approx(profile_depth).epsilon(1e-6));
    CHECK(table.number(table.rows[0], table.column("cov_profile_zz_m2")) == Approx(profile_depth * profile_depth).epsilon(1e-6));
    CHECK(table.text(table.rows[0], table.column("profile_matching_changed")) == "0");
}
