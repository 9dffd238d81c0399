// Reading fit data (src/model/fit_data.*): checked against the definitions of the columns and the
// published density rules. Rendering profiles and fits is tested in tests/output/.
#include <cmath>

#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "io/csv_reader.hpp"
#include "model/fit_data.hpp"
#include "model/model_file.hpp"
#include "support/run_cli.hpp"

using namespace firnray;
using firnray::test::temp_folder;
using firnray::test::write_file;

TEST_CASE("read_fit_data: z columns become depths and densities in g/cm3 become n by Kovacs et al. (1995)",
          "[model][fit]") {
    const std::string path = write_file(temp_folder("fit-data") + "/log.csv", "z,rho\n0,0.4\n-10,0.5\n-30,0.7\n");
    FitColumns columns;
    columns.depth = "z";
    columns.depth_is_z = true;
    columns.value = "rho";
    columns.density_rule = DensityRule::kovacs;
    columns.density_unit = DensityUnit::g_cm3;
    const FitData data = read_fit_data(path, columns);
    CHECK(data.path == path);
    CHECK(data.depth_m == std::vector<double>{0.0, 10.0, 30.0});
    CHECK(data.value == std::vector<double>{0.4, 0.5, 0.7});
    // n = 1 + 0.845 rho (Kovacs, Gow & Morey 1995, from memory).
    const auto n = data.index_values();
    REQUIRE(n.size() == 3);
    CHECK(n[1] == Approx(1.0 + 0.845 * 0.5).epsilon(1e-15));
}

TEST_CASE("read_fit_data: bad rows are data errors naming the file, line and column", "[model][fit]") {
    const std::string dir = temp_folder("fit-data-bad");
    FitColumns n_columns;  // depth_m and n
    CHECK_THROWS_WITH(read_fit_data(write_file(dir + "/neg.csv", "depth_m,n\n5,1.4\n-3,1.5\n"), n_columns),
                      Catch::Matchers::Contains("neg.csv:3: key 'depth_m': depth -3 m is negative"));
    CHECK_THROWS_WITH(read_fit_data(write_file(dir + "/low.csv", "depth_m,n\n5,0.9\n"), n_columns),
                      Catch::Matchers::Contains("low.csv:2: key 'n': n = 0.9 is below 1"));
    CHECK_THROWS_AS(read_fit_data(write_file(dir + "/empty.csv", "depth_m,n\n"), n_columns), DataInputError);
    FitColumns density;
    density.value = "rho";
    density.density_rule = DensityRule::looyenga;  // in kg/m3 by default: 1.4 kg/m3 is no firn density
    CHECK_THROWS_WITH(read_fit_data(write_file(dir + "/unit.csv", "depth_m,rho\n5,1.4\n"), density),
                      Catch::Matchers::Contains("unit.csv:2: key 'rho': density 1.4 kg/m3 is not a snow, firn or ice density"));
    CHECK_THROWS_WITH(read_fit_data(write_file(dir + "/col.csv", "depth_m,index\n5,1.4\n"), n_columns),
                      Catch::Matchers::Contains("col.csv"));
}
