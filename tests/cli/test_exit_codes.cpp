// End-to-end: every exit code of the README's table and the paths that lead to it, with the
// "firnray:" prefix on every message and a "did you mean" where a name was mistyped.
#include <catch2/catch.hpp>

#include <string>
#include <vector>

#include "support/run_cli.hpp"

using namespace firnray::test;

namespace {

void check_usage_error(const std::vector<std::string>& args, const std::string& expected_in_message) {
    const auto r = run_firnray(args);
    INFO(r.err);
    CHECK(r.exit_code == 2);
    CHECK(r.err.rfind("firnray: ", 0) == 0);
    CHECK(r.err.find(expected_in_message) != std::string::npos);
    CHECK(r.out.empty());
}

}  // namespace

TEST_CASE("exit 2: mistyped commands, unknown options and CLI11 parse errors, all prefixed firnray:", "[cli][exit]") {
    check_usage_error({"shadw"}, "did you mean 'shadow'?");
    check_usage_error({"NOSUCH", "--help"}, "'NOSUCH' is not a firnray command");
    check_usage_error({"connect", "--sorce", "1,-1"}, "did you mean '--source'?");
    check_usage_error({}, "subcommand");
    check_usage_error({"shadow", "--distance-cells"}, "--distance-cells");
    check_usage_error({"shadow", "--distance-cells", "abc"}, "--distance-cells");
    check_usage_error({"profile", "--format", "xml"}, "--format");
    check_usage_error({"connect", "--source", "1,-1", "--receiver", "2,-2", "--solver", "numerc"},
                      "did you mean 'numeric'?");
    check_usage_error({"shadow", "--receiver", "0,-60", "--colour-by", "recievers"}, "did you mean 'receivers'?");
}

TEST_CASE("exit 2: wrong option values, each finite and in range, numbers written as people read them", "[cli][exit]") {
    const std::string station = source_path("demo/station.toml");
    check_usage_error({"shadow", "--receiver", "0,-60", "--source-distance", "-100:1500"}, "not -100");
    check_usage_error({"shadow", "--receiver", "0,-60", "--distance", "-100:1500"}, "not -100");  // old spelling
    check_usage_error({"shadow", "--station", station, "--min-receivers", "21"}, "more receivers than there are (20)");
    check_usage_error({"delays", "--station", station, "--sources", source_path("demo/calibration-sources.csv"),
                       "--reference", "Z9"},
                      "no receiver named 'Z9'");
    check_usage_error({"delays", "--station", station, "--sources", source_path("demo/calibration-sources.csv"),
                       "--reference", "A9"},
                      "did you mean");
    check_usage_error({"shadow", "--station", station, "--receivers", "A1,B77"}, "no receiver named 'B77'");
    check_usage_error({"shadow", "--receiver", "0,-60", "--azimuth-deg", "nan"}, "finite");
    check_usage_error({"delays", "--station", station, "--source-distance", "100", "--source-depth", "50",
                       "--azimuth-deg", "nan"},
                      "finite");
    check_usage_error({"trace", "--from", "0,-60", "--zenith-deg", "80", "--spacing", "inf"}, "finite");
    check_usage_error({"trace", "--from", "0,-60", "--zenith-deg", "80", "--floor-depth", "nan"}, "finite");
    check_usage_error({"depths", "--amplitude-threshold", "-1"}, "above 0");
    check_usage_error({"connect", "--source", "1e999,-20", "--receiver", "0,-100"}, "not a finite number");
    const auto huge = run_firnray({"depths", "--max-distance", "-5"});
    CHECK(huge.exit_code == 2);
    CHECK(huge.err.find("-5") != std::string::npos);
    CHECK(huge.err.find("000000000000") == std::string::npos);  // no 300-digit bounds
    const auto binary = run_firnray({"connect", "--source", "1\x01\xff,2", "--receiver", "0,-100"});
    CHECK(binary.exit_code == 2);
    CHECK(binary.err.find("\\x01\\xff") != std::string::npos);
}

TEST_CASE("exit 3, 4, 5, 6 and 7: a bad model or station file, bad data, a failed fit, an unwritable output, bad rows",
          "[cli][exit]") {
    const std::string dir = temp_folder("exit-codes");
    CHECK(run_firnray({"profile", "--model", dir + "/none.toml"}).exit_code == 3);
    write_file(dir + "/bad.toml", "[index]\nkind = \"exponental\"\n");
    CHECK(run_firnray({"profile", "--model", dir + "/bad.toml"}).exit_code == 3);
    CHECK(run_firnray({"shadow", "--station", dir + "/none.toml"}).exit_code == 3);

    write_file(dir + "/pairs.csv", "source_x_m,source_z_m,receiver_x_m\n1,2,3\n");
    const auto missing = run_firnray({"connect", "--pairs", dir + "/pairs.csv"});
    CHECK(missing.exit_code == 4);
    CHECK(missing.err.find("receiver_z_m") != std::string::npos);
    write_file(dir + "/binary.csv", "source_x_m,source_z_m,receiver_x_m,receiver_z\x01\xfe\n1,2,3,4\n");
    const auto binary = run_firnray({"connect", "--pairs", dir + "/binary.csv"});
    CHECK(binary.exit_code == 4);
    CHECK(binary.err.find("\\x01\\xfe") != std::string::npos);
    CHECK(run_firnray({"connect", "--pairs", dir + "/none.csv"}).exit_code == 4);
    write_file(dir + "/flat.csv", "depth_m,n\n0,1.5\n10,1.5\n20,1.5\n40,1.5\n");
    CHECK(run_firnray({"profile", "--fit", dir + "/flat.csv"}).exit_code == 5);

    CHECK(run_firnray({"profile", "-o", dir + "/no/such/folder/p.csv"}).exit_code == 6);
    CHECK(run_firnray({"profile", "-o", dir}).exit_code == 6);

    write_file(dir + "/some-bad.csv",
               "source_x_m,source_z_m,receiver_x_m,receiver_z_m,name\n250,-20,0,-100,good\n1,x,0,-100,bad\n");
    const auto partial = run_firnray({"connect", "--pairs", dir + "/some-bad.csv", "--format", "csv"});
    CHECK(partial.exit_code == 7);
    CHECK(partial.out.find("good") != std::string::npos);
    CHECK(run_firnray({"--version"}).exit_code == 0);
    CHECK(run_firnray({"shadow", "--help"}).exit_code == 0);
}

TEST_CASE("old option spellings still work for one release, with a deprecation warning on stderr", "[cli][exit]") {
    const auto old_profile = run_firnray({"profile", "--to-depth", "20", "--step", "2"});
    const auto new_profile = run_firnray({"profile", "--depths", "0:20:2"});
    CHECK(old_profile.exit_code == 0);
    CHECK(old_profile.out == new_profile.out);
    CHECK(old_profile.err.find("--to-depth is deprecated") != std::string::npos);
    CHECK(new_profile.err.empty());

    const auto old_trace = run_firnray({"trace", "--from", "0,-60", "--zenith-deg", "80,120", "--floor-z", "-100",
                                        "--ceiling-z", "20", "--max-interactions", "3"});
    const auto new_trace = run_firnray({"trace", "--from", "0,-60", "--zenith-deg", "80,120", "--floor-depth", "100",
                                        "--ceiling-height", "20", "--max-bounces", "3"});
    CHECK(old_trace.exit_code == 0);
    CHECK(old_trace.out == new_trace.out);
    CHECK(old_trace.err.find("--max-interactions is deprecated") != std::string::npos);

    const std::vector<std::string> grid = {"--distance-cells", "20", "--depth-cells", "10", "--quiet"};
    auto old_shadow = std::vector<std::string>{"shadow", "--receiver", "0,-60", "--distance", "0:500", "--depth", "0:100"};
    auto new_shadow =
        std::vector<std::string>{"shadow", "--receiver", "0,-60", "--source-distance", "0:500", "--source-depth", "0:100"};
    old_shadow.insert(old_shadow.end(), grid.begin(), grid.end());
    new_shadow.insert(new_shadow.end(), grid.begin(), grid.end());
    CHECK(run_firnray(old_shadow).out == run_firnray(new_shadow).out);
    // Both spellings at once is a usage error.
    CHECK(run_firnray({"shadow", "--receiver", "0,-60", "--distance", "0:500", "--source-distance", "0:400"}).exit_code == 2);

    const std::string dir = temp_folder("old-id");
    write_file(dir + "/pairs.csv", "source_x_m,source_z_m,receiver_x_m,receiver_z_m,id\n250,-20,0,-100,p1\n");
    const auto old_id = run_firnray({"connect", "--pairs", dir + "/pairs.csv", "--format", "csv"});
    CHECK(old_id.exit_code == 0);
    CHECK(old_id.err.find("'id' is deprecated") != std::string::npos);
    CHECK(old_id.out.find("p1") != std::string::npos);
}
