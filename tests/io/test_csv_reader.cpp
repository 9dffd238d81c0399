#include <catch2/catch.hpp>

#include "core/errors.hpp"
#include "io/csv_reader.hpp"
#include "support/run_cli.hpp"

using namespace firnray;

TEST_CASE("CSV: header, comments, blank lines, line numbers and quoted fields", "[io][csv]") {
    const std::string text =
        "# a measured profile\n"
        "\n"
        "depth_m, n ,label\r\n"
        "0, 1.35, \"top, of firn\"\n"
        "  # halfway comment\n"
        "10.5,1.5,\"say \"\"hi\"\"\"\n"
        "\n"
        "+20,1.6e0,plain\n";
    const CsvTable t = parse_csv(text, "mem.csv");
    CHECK(t.header_line == 3);
    REQUIRE(t.columns == std::vector<std::string>{"depth_m", "n", "label"});
    REQUIRE(t.rows.size() == 3);
    CHECK(t.rows[0].line == 4);
    CHECK(t.rows[1].line == 6);
    CHECK(t.rows[2].line == 8);
    CHECK(t.number(t.rows[1], "depth_m") == 10.5);
    CHECK(t.number(t.rows[2], "depth_m") == 20.0);
    CHECK(t.number(t.rows[2], t.column("n")) == 1.6);
    CHECK(t.text(t.rows[0], 2) == "top, of firn");
    CHECK(t.text(t.rows[1], 2) == "say \"hi\"");
}

TEST_CASE("CSV: a bad row throws for that row only, naming file, line and column", "[io][csv]") {
    const std::string text =
        "depth_m,n\n"
        "1,1.4\n"
        "2,abc\n"
        "3\n"
        "4,1.5,9\n"
        "5,\"open\n"
        "6,nan\n"
        "7,\n"
        "8,1.6\n";
    const CsvTable t = parse_csv(text, "pairs.csv");
    REQUIRE(t.rows.size() == 8);
    int good = 0;
    std::vector<std::string> messages;
    for (const auto& row : t.rows) {
        try {
            t.number(row, "depth_m");
            t.number(row, "n");
            ++good;
        } catch (const DataInputError& e) {
            messages.push_back(e.what());
            CHECK(e.where().file == "pairs.csv");
            CHECK(e.where().line == row.line);
        }
    }
    CHECK(good == 2);
    REQUIRE(messages.size() == 6);
    CHECK(messages[0] == "pairs.csv:3: key 'n': 'abc' is not a finite number");
    CHECK(messages[1].find("pairs.csv:4: the row has 1 field but the header names 2 columns") == 0);
    CHECK(messages[2].find("pairs.csv:5: the row has 3 fields") == 0);
    CHECK(messages[3].find("pairs.csv:6: ") == 0);
    CHECK(messages[3].find("quote") != std::string::npos);
    CHECK(messages[4] == "pairs.csv:7: key 'n': 'nan' is not a finite number");
    CHECK(messages[5].find("pairs.csv:8: key 'n': the field is empty") == 0);
}

TEST_CASE("CSV: table-level errors and the model error kind", "[io][csv]") {
    const std::string missing = "rho.csv";
    CHECK_THROWS_AS(parse_csv("# only comments\n\n", missing), DataInputError);
    CHECK_THROWS_AS(parse_csv("a,,b\n1,2,3\n", missing), DataInputError);
    CHECK_THROWS_AS(parse_csv("a,b,a\n1,2,3\n", missing), DataInputError);
    CHECK_THROWS_AS(parse_csv("", missing, CsvErrorKind::model), ModelInputError);
    const CsvTable t = parse_csv("depth_m,n\n1,x\n", "rho.csv", CsvErrorKind::model);
    CHECK_THROWS_AS(t.number(t.rows[0], "n"), ModelInputError);
    try {
        t.column("density");
        FAIL("expected an error");
    } catch (const ModelInputError& e) {
        CHECK(std::string(e.what()).find("rho.csv:1: key 'density': no column named 'density'") == 0);
        CHECK(std::string(e.what()).find("'depth_m', 'n'") != std::string::npos);
    }
    CHECK_THROWS_AS(read_csv("/nonexistent/folder/x.csv"), DataInputError);
    CHECK_THROWS_AS(read_csv("/nonexistent/folder/x.csv", CsvErrorKind::model), ModelInputError);
}

TEST_CASE("CSV: read_csv reads a file from disk", "[io][csv]") {
    const std::string dir = firnray::test::temp_folder("csv");
    const std::string path = firnray::test::write_file(dir + "/t.csv", "\xEF\xBB\xBFz_m,n\n-1,1.4\n-2,1.45\n");
    const CsvTable t = read_csv(path);
    CHECK(t.columns.front() == "z_m");
    CHECK(t.number(t.rows[1], "z_m") == -2.0);
}

TEST_CASE("parse_number accepts whole finite numbers only", "[io][csv]") {
    CHECK(parse_number(" 1.5 ") == 1.5);
    CHECK(parse_number("-2e3") == -2000.0);
    CHECK(parse_number("+7") == 7.0);
    CHECK_FALSE(parse_number("1.5m").has_value());
    CHECK_FALSE(parse_number("").has_value());
    CHECK_FALSE(parse_number("inf").has_value());
    CHECK_FALSE(parse_number("1,5").has_value());
}

#include <fstream>

TEST_CASE("CSV stream: blocks of rows give the same rows and lines as the whole-file reader", "[io][csv]") {
    const std::string dir = test::temp_folder("csv-stream");
    std::string text = "\xEF\xBB\xBF# comment\n\nx,y,name\r\n";
    for (int i = 0; i < 1000; ++i) {
        text += std::to_string(i) + "," + std::to_string(2 * i) + ",\"p, " + std::to_string(i) + "\"\n";
        if (i % 100 == 3) text += "  # a comment inside\n\n";
        if (i % 250 == 7) text += "1,\"open quote\n";
    }
    test::write_file(dir + "/t.csv", text);
    const CsvTable whole = parse_csv(text, dir + "/t.csv");
    CsvStreamReader stream(dir + "/t.csv");
    CHECK(stream.table().columns == whole.columns);
    CHECK(stream.table().header_line == whole.header_line);
    std::vector<CsvRow> block, all;
    while (stream.read_rows(block, 64)) {
        CHECK(block.size() <= 64u);
        all.insert(all.end(), block.begin(), block.end());
    }
    REQUIRE(all.size() == whole.rows.size());
    for (std::size_t i = 0; i < all.size(); ++i) {
        CHECK(all[i].line == whole.rows[i].line);
        CHECK(all[i].fields == whole.rows[i].fields);
        CHECK(all[i].problem == whole.rows[i].problem);
    }
    CHECK(stream.bytes_read() == stream.file_bytes());
    CHECK_FALSE(stream.read_rows(block, 64));
}

TEST_CASE("CSV stream: a missing file, no header, a bad header and an over-long line", "[io][csv]") {
    const std::string dir = test::temp_folder("csv-stream-bad");
    CHECK_THROWS_AS(CsvStreamReader(dir + "/none.csv"), DataInputError);
    CHECK_THROWS_AS(CsvStreamReader(test::write_file(dir + "/empty.csv", "# only a comment\n\n")), DataInputError);
    CHECK_THROWS_AS(CsvStreamReader(test::write_file(dir + "/twice.csv", "a,a\n1,2\n"), CsvErrorKind::model),
                    ModelInputError);
    std::string long_line(CsvStreamReader::most_line_bytes + 10, ',');
    CsvStreamReader reader(test::write_file(dir + "/long.csv", "a,b\n" + long_line + "\n1,2\n"));
    std::vector<CsvRow> rows;
    REQUIRE(reader.read_rows(rows, 10));
    REQUIRE(rows.size() == 2u);
    CHECK(rows[0].problem.find("longer than") != std::string::npos);
    CHECK(rows[0].fields.empty());
    CHECK(rows[1].line == 3);
    CHECK(rows[1].fields == std::vector<std::string>{"1", "2"});
}

TEST_CASE("CSV: bad bytes in a field are shown as printable escapes in the message", "[io][csv]") {
    const CsvTable t = parse_csv("x\n1\x01\xff\n", "bytes.csv");
    try {
        t.number(t.rows[0], 0);
        FAIL("no error");
    } catch (const DataInputError& e) {
        CHECK(std::string(e.what()).find("\\x01\\xff") != std::string::npos);
    }
}
