// Propagating a model's uncertainty: the linearised law against outputs whose variance is known
// in closed form, Monte Carlo draws against the covariance they are drawn from, and the two
// methods against each other.
#include <cmath>

#include <catch2/catch.hpp>

#include "model/model_file.hpp"
#include "model/model_parameters.hpp"
#include "paths/find_paths.hpp"
#include "solver/make_solver.hpp"
#include "uncertainty/model_perturbation.hpp"
#include "uncertainty/propagation.hpp"
#include "core/constants.hpp"

using namespace firnray;

namespace {

FirnModel exponential_with_covariance() {
    return parse_model("[index]\nkind = \"exponential\"\nn_deep = 1.78\nn_surface = 1.35\nscale_depth_m = 37\n"
                       "[uncertainty]\nparameters = [\"n_surface\", \"scale_depth_m\", \"n_deep\"]\n"
                       "covariance = [[4e-4, 0.01, 0], [0.01, 9.0, 0], [0, 0, 1e-6]]\n",
                       "test.toml");
}

}  // namespace

TEST_CASE("Linearised propagation of a linear function gives a'Ca exactly (GUM, JCGM 100 2008, law of propagation)",
          "[uncertainty]") {
    const ModelPerturbation perturbation(exponential_with_covariance());
    CHECK(perturbation.dimension() == 3);
    const auto f = [](const FirnModel& m) {
        const auto v = profile_parameter_values(*m.index);  // n_surface, n_deep, scale_depth_m
        return std::vector<double>{v[0] + 2.0 * v[2], 3.0 * v[1]};
    };
    const auto r = propagate_uncertainty(perturbation, f, {});
    // a = (1, 0, 2) over (n_surface, n_deep, scale): 4e-4 + 4 * 0.01 + 4 * 9
    CHECK(r.covariance[0][0] == Approx(4e-4 + 4.0 * 0.01 + 4.0 * 9.0).epsilon(1e-9));
    CHECK(r.covariance[1][1] == Approx(9.0 * 1e-6).epsilon(1e-9));
    CHECK(std::abs(r.covariance[0][1]) < 1e-12);
    CHECK(r.nominal[0] == Approx(1.35 + 74.0));
}

TEST_CASE("The derivative of a straight-ray time in uniform ice is L over c (Fermat, t = nL/c)", "[uncertainty]") {
    const FirnModel model = parse_model("[index]\nkind = \"constant\"\nn = 1.78\n"
                                        "[uncertainty]\nparameters = [\"n\"]\ncovariance = [[1e-4]]\n",
                                        "uniform.toml");
    const ModelPerturbation perturbation(model);
    const Point source{300.0, 0.0, -150.0}, receiver{0.0, 0.0, -100.0};
    const double length = std::hypot(300.0, 50.0);
    const auto time_ns = [&](const FirnModel& m) {
        const auto solver = make_solver(std::make_shared<FirnModel>(m), SolverChoice::automatic);
        const auto paths = find_paths(*solver, source, receiver);
        return std::vector<double>{paths.empty() ? NAN : paths.front().time_s * 1e9};
    };
    const auto r = propagate_uncertainty(perturbation, time_ns, {});
    CHECK(r.nominal[0] == Approx(1.78 * length / speed_of_light * 1e9).epsilon(1e-9));
    CHECK(r.sigma[0] == Approx(0.01 * length / speed_of_light * 1e9).epsilon(1e-6));
}

TEST_CASE("Monte Carlo draws reproduce the covariance they come from (sample covariance of a multivariate normal)",
          "[uncertainty]") {
    const ModelPerturbation perturbation(exponential_with_covariance());
    const auto f = [](const FirnModel& m) { return profile_parameter_values(*m.index); };
    PropagationOptions options;
    options.method = PropagationMethod::monte_carlo;
    options.samples = 4000;
    const auto r = propagate_uncertainty(perturbation, f, options);
    CHECK(r.rejected == 0);
    // standard error of a sample variance: σ² √(2/(N-1)), about 2.2 % here; 4 standard errors
    CHECK(r.covariance[0][0] == Approx(4e-4).epsilon(0.09));
    CHECK(r.covariance[2][2] == Approx(9.0).epsilon(0.09));
    CHECK(r.covariance[1][1] == Approx(1e-6).epsilon(0.09));
    const double correlation = r.covariance[0][2] / std::sqrt(r.covariance[0][0] * r.covariance[2][2]);
    CHECK(correlation == Approx(0.01 / std::sqrt(4e-4 * 9.0)).margin(0.07));
    // the same draws whatever the thread count
    options.samples = 64;
    options.threads = 1;
    const auto one = propagate_uncertainty(perturbation, f, options);
    options.threads = 2;
    const auto two = propagate_uncertainty(perturbation, f, options);
    CHECK(one.covariance == two.covariance);
    options.seed = 7;
    CHECK(propagate_uncertainty(perturbation, f, options).covariance != one.covariance);
}

TEST_CASE("A table's per-point uncertainty keeps 99.9 percent of its variance (Karhunen-Loeve truncation)",
          "[uncertainty]") {
    std::string depth = "[", n = "[";
    for (int i = 0; i < 60; ++i) {
        depth += std::to_string(i * 2.5) + ",";
        n += std::to_string(1.78 - 0.43 * std::exp(-i * 2.5 / 37.0)) + ",";
    }
    const FirnModel model = parse_model("[index]\nkind = \"table\"\ndepth_m = " + depth + "]\nn = " + n +
                                            "]\n[uncertainty]\nindex_sigma = 0.01\ncorrelation_length_m = 10\n",
                                        "table.toml");
    const ModelPerturbation perturbation(model);
    CHECK(perturbation.dimension() < 30);  // correlated points: few components
    // n at 50 m has variance 1e-4 (the points at 50 m): linearised recovers it within the truncation
    const auto n_at_50 = [](const FirnModel& m) { return std::vector<double>{m.index->index(-50.0)}; };
    const auto r = propagate_uncertainty(perturbation, n_at_50, {});
    CHECK(r.sigma[0] == Approx(0.01).epsilon(0.02));
}

TEST_CASE("Linearised and Monte Carlo propagation agree on arrival times (GUM supplement 1, JCGM 101 2008)",
          "[uncertainty]") {
    const ModelPerturbation perturbation(exponential_with_covariance());
    const Point source{400.0, 0.0, -120.0}, receiver{0.0, 0.0, -60.0};
    const auto times = [&](const FirnModel& m) {
        const auto solver = make_solver(std::make_shared<FirnModel>(m), SolverChoice::automatic);
        const auto paths = find_paths(*solver, source, receiver);
        std::vector<double> t(2, NAN);
        for (std::size_t i = 0; i < paths.size() && i < 2; ++i) t[i] = paths[i].time_s * 1e9;
        return std::vector<double>{t[0], t[1], t[1] - t[0]};
    };
    const auto linear = propagate_uncertainty(perturbation, times, {});
    PropagationOptions options;
    options.method = PropagationMethod::monte_carlo;
    options.samples = 400;
    options.threads = 2;
    const auto sampled = propagate_uncertainty(perturbation, times, options);
    for (int i = 0; i < 3; ++i) {
        INFO("output " << i << ": linearised " << linear.sigma[i] << " ns, Monte Carlo " << sampled.sigma[i]);
        CHECK(sampled.sigma[i] == Approx(linear.sigma[i]).epsilon(0.10));
    }
}

TEST_CASE("A model without an uncertainty section cannot be propagated, and says so", "[uncertainty]") {
    try {
        ModelPerturbation p(default_model());
        FAIL("no error");
    } catch (const ModelInputError& e) {
        CHECK(std::string(e.what()).find("has no [uncertainty]") != std::string::npos);
    }
}
