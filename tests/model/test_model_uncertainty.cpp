// Profile parameters by name and the [uncertainty] table of model files: reading, the checks a
// covariance must pass (symmetric positive semi-definite, the definition of a covariance matrix,
// common practice), and writing it back.
#include <cmath>

#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "model/layered_profile.hpp"
#include "model/model_file.hpp"
#include "model/model_parameters.hpp"
#include "model/table_profile.hpp"

using namespace firnray;

namespace {

const std::string exponential_head =
    "name = \"x\"\n"              // 1
    "[index]\n"                   // 2
    "kind = \"exponential\"\n"    // 3
    "n_deep = 1.78\n"             // 4
    "n_surface = 1.35\n"          // 5
    "scale_depth_m = 37\n"        // 6
    "[uncertainty]\n";            // 7

ModelInputError expect_error(const std::string& text, const std::string& fragment, const std::string& key = "") {
    try {
        parse_model(text, "m.toml");
    } catch (const ModelInputError& e) {
        INFO(e.what());
        CHECK(std::string(e.what()).find(fragment) != std::string::npos);
        if (!key.empty()) CHECK(e.where().key == key);
        CHECK(e.where().file == "m.toml");
        return e;
    }
    FAIL("no error for:\n" << text);
    throw;
}

}  // namespace

TEST_CASE("Parameters of each profile kind by name, and a profile rebuilt from its values", "[uncertainty][model]") {
    const ExponentialProfile e(1.78, 1.35, 37.0);
    CHECK(profile_parameter_names(e) == std::vector<std::string>{"n_surface", "n_deep", "scale_depth_m"});
    CHECK(profile_parameter_values(e) == std::vector<double>{1.35, 1.78, 37.0});
    const std::vector<double> changed{1.30, 1.77, 40.0};
    const auto rebuilt = profile_with_parameters(e, changed);
    CHECK(profile_parameter_values(*rebuilt) == changed);
    CHECK(rebuilt->index(0.0) == Approx(1.30));

    const LayeredProfile layered(1.33, {{10.0, 1.85, 30.0}, {}}, 2.0);
    const auto names = profile_parameter_names(layered);
    CHECK(names == std::vector<std::string>{"n_surface", "layer[0].n_deep", "layer[0].scale_depth_m",
                                            "layer[0].bottom_depth_m", "layer[1].n_deep", "layer[1].scale_depth_m"});
    auto values = profile_parameter_values(layered);
    REQUIRE(values.size() == names.size());
    values[3] = 12.0;
    CHECK(profile_parameter_values(*profile_with_parameters(layered, values))[3] == 12.0);

    const double bad_values[] = {1.9, 1.78, 37.0};  // n_surface above n_deep
    CHECK_THROWS_AS(profile_with_parameters(e, bad_values), ModelInputError);
    const double too_few[] = {1.35, 1.78};
    CHECK_THROWS_AS(profile_with_parameters(e, too_few), ModelInputError);

    const TableProfile table({0.0, 10.0, 20.0, 40.0}, {1.35, 1.5, 1.6, 1.7});
    CHECK(profile_parameter_names(table).empty());
    const double n[] = {1.36, 1.5, 1.6, 1.7};
    CHECK(table_with_index(table, n)->index(0.0) == Approx(1.36));
}

TEST_CASE("An uncertainty section is read and written back unchanged", "[uncertainty][model]") {
    const std::string text = exponential_head +
                             "parameters = [\"n_surface\", \"scale_depth_m\"]\n"
                             "covariance = [[1e-4, 0.002], [0.002, 4.0]]\n";
    const FirnModel model = parse_model(text, "m.toml");
    REQUIRE(model.uncertainty);
    REQUIRE(model.uncertainty->parameters);
    CHECK(model.uncertainty->parameters->names == std::vector<std::string>{"n_surface", "scale_depth_m"});
    CHECK(model.uncertainty->parameters->matrix[1][0] == 0.002);
    const FirnModel again = parse_model(model_to_toml(model), "again.toml");
    REQUIRE(again.uncertainty);
    CHECK(again.uncertainty->parameters->matrix == model.uncertainty->parameters->matrix);
    CHECK(again.uncertainty->parameters->names == model.uncertainty->parameters->names);
    CHECK_FALSE(model_with_parameters(model, std::vector<double>{1.35, 1.78, 37.0}).uncertainty);
}

TEST_CASE("A table's uncertainty is a 1 sigma per point with a correlation length", "[uncertainty][model]") {
    const std::string table =
        "[index]\nkind = \"table\"\ndepth_m = [0, 10, 20, 40]\nn = [1.35, 1.5, 1.6, 1.7]\n[uncertainty]\n";
    const FirnModel one = parse_model(table + "index_sigma = 0.01\ncorrelation_length_m = 5\n", "m.toml");
    REQUIRE(one.uncertainty->index);
    CHECK(one.uncertainty->index->sigma_n == std::vector<double>(4, 0.01));
    CHECK(one.uncertainty->index->correlation_length_m == 5.0);
    const FirnModel each = parse_model(table + "index_sigma = [0.02, 0.01, 0.01, 0.005]\n", "m.toml");
    CHECK(each.uncertainty->index->sigma_n[0] == 0.02);
    CHECK(each.uncertainty->index->correlation_length_m == 0.0);
    const FirnModel again = parse_model(model_to_toml(each), "again.toml");
    CHECK(again.uncertainty->index->sigma_n == each.uncertainty->index->sigma_n);
    expect_error(table + "index_sigma = [0.02, 0.01]\n", "has 2 values for the 4 points", "uncertainty.index_sigma");
    expect_error(exponential_head + "index_sigma = 0.01\n", "needs a table profile", "uncertainty.index_sigma");
}

TEST_CASE("Bad uncertainty sections name what is wrong and where", "[uncertainty][model]") {
    const auto not_symmetric = expect_error(exponential_head +
                                                "parameters = [\"n_surface\", \"n_deep\"]\n"
                                                "covariance = [[1e-4, 1e-5], [2e-5, 1e-6]]\n",
                                            "not symmetric", "uncertainty.covariance");
    CHECK(not_symmetric.where().line == 9);
    expect_error(exponential_head +
                     "parameters = [\"n_surface\", \"n_deep\"]\n"
                     "covariance = [[1e-4, 2e-4], [2e-4, 1e-4]]\n",  // correlation 2
                 "not positive semi-definite", "uncertainty.covariance");
    expect_error(exponential_head + "parameters = [\"n_surfce\"]\ncovariance = [[1e-4]]\n", "did you mean 'n_surface'",
                 "uncertainty.parameters[0]");
    expect_error(exponential_head + "parameters = [\"n_deep\", \"n_deep\"]\ncovariance = [[1,0],[0,1]]\n",
                 "named twice");
    expect_error(exponential_head + "parameters = [\"n_deep\"]\ncovariance = [[1e-4, 0]]\n", "has 2 numbers");
    expect_error(exponential_head + "parameters = [\"n_deep\"]\ncovariance = [[-1e-4]]\n", "negative");
    expect_error(exponential_head + "covariance = [[1e-4]]\n", "name the parameters", "uncertainty.parameters");
    expect_error(exponential_head + "sigma = 1\n", "sigma");
}
