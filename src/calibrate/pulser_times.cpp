#include "calibrate/pulser_times.hpp"

#include <cmath>
#include <map>
#include <optional>

#include <fmt/format.h>

#include "core/errors.hpp"
#include "core/text.hpp"
#include "io/csv_reader.hpp"

namespace firnray {

namespace {

// Rows of one pulser may repeat its position with rounding of their own (a script printing
// coordinates); farther apart than this they name two places.
constexpr double same_position_tolerance_m = 1e-6;

// The reader of one file: throws at file:line:column with the column's name, so that a message
// points at the very field.
struct TimesReader {
    const CsvTable& table;

    [[noreturn]] void fail(const CsvRow& row, std::size_t column, const std::string& reason) const {
        const int character = column < row.field_columns.size() ? row.field_columns[column] : 0;
        throw DataInputError(reason, {table.path, row.line, table.columns.at(column), character});
    }
    const std::string& text(const CsvRow& row, std::size_t column) const { return table.text(row, column); }
    double number(const CsvRow& row, std::size_t column) const {
        const std::string& field = text(row, column);
        if (const auto value = parse_number(field)) return *value;
        if (field.empty()) fail(row, column, "the field is empty; a number is needed");
        fail(row, column, fmt::format("'{}' is not a finite number", printable_excerpt(field)));
    }
};

std::size_t channel_named(const TimesReader& reader, const CsvRow& row, std::size_t column, const Station& station) {
    const std::string& name = reader.text(row, column);
    std::vector<std::string> names;
    for (std::size_t i = 0; i < station.receivers.size(); ++i) {
        if (station.receivers[i].name == name) return i;
        names.push_back(station.receivers[i].name);
    }
    reader.fail(row, column,
                fmt::format("'{}' is not a receiver of station '{}'{}", printable_excerpt(name), station.name,
                            did_you_mean(name, names)));
}

}  // namespace

std::size_t PulserTimes::pulse_count() const {
    std::size_t count = 0;
    for (const Pulser& p : pulsers) count += p.pulses.size();
    return count;
}

PulserTimes read_pulser_times(const std::string& path, const Station& station, double default_sigma_ns) {
    if (!std::isfinite(default_sigma_ns) || default_sigma_ns <= 0.0)
        throw DataInputError(fmt::format("the default timing uncertainty must be a positive number of ns, not {}",
                                         number_for_message(default_sigma_ns)),
                             {"", 0, "--timing-sigma-ns"});
    const CsvTable table = read_csv(path);
    const TimesReader reader{table};
    const std::size_t pulser_column = table.column("pulser"), x_column = table.column("pulser_x_m"),
                      y_column = table.column("pulser_y_m"), z_column = table.column("pulser_z_m"),
                      channel_column = table.column("channel"), time_column = table.column("time_ns");
    const std::optional<std::size_t> sigma_column = table.find_column("sigma_ns");
    if (table.rows.empty())
        throw DataInputError("the times file has a header but no pulses", {path, table.header_line, ""});

    PulserTimes times;
    times.path = path;
    std::map<std::string, std::size_t> index_of_pulser;
    std::vector<int> first_character;  // of each pulser's name on its first line, for messages
    for (const CsvRow& row : table.rows) {
        const std::string& name = reader.text(row, pulser_column);
        if (name.empty()) reader.fail(row, pulser_column, "the pulser name is empty");
        const Point position{reader.number(row, x_column), reader.number(row, y_column), reader.number(row, z_column)};
        auto [it, inserted] = index_of_pulser.try_emplace(name, times.pulsers.size());
        if (inserted) {
            times.pulsers.push_back(Pulser{name, position, row.line, {}});
            first_character.push_back(row.field_columns.at(pulser_column));
        }
        Pulser& pulser = times.pulsers[it->second];
        const double moved = std::hypot(position.x - pulser.position.x, position.y - pulser.position.y,
                                        position.z - pulser.position.z);
        if (moved > same_position_tolerance_m)
            reader.fail(row, moved == std::abs(position.z - pulser.position.z) ? z_column : x_column,
                        fmt::format("pulser '{}' is at ({}, {}, {}) m here but at ({}, {}, {}) m on line {}; a "
                                    "pulser has one position (give each shot of a lowered pulser its own name)",
                                    printable_excerpt(name), number_for_message(position.x),
                                    number_for_message(position.y), number_for_message(position.z),
                                    number_for_message(pulser.position.x), number_for_message(pulser.position.y),
                                    number_for_message(pulser.position.z), pulser.first_line));
        PulserPulse pulse;
        pulse.line = row.line;
        pulse.channel = channel_named(reader, row, channel_column, station);
        pulse.time_ns = reader.number(row, time_column);
        pulse.sigma_ns = default_sigma_ns;
        if (sigma_column && !reader.text(row, *sigma_column).empty()) {
            pulse.sigma_ns = reader.number(row, *sigma_column);
            if (pulse.sigma_ns <= 0.0)
                reader.fail(row, *sigma_column,
                            fmt::format("{} is not a timing uncertainty: it must be above 0 ns",
                                        number_for_message(pulse.sigma_ns)));
        }
        int same_channel = 0;
        for (const PulserPulse& earlier : pulser.pulses) same_channel += earlier.channel == pulse.channel ? 1 : 0;
        if (same_channel >= 2)
            reader.fail(row, channel_column,
                        fmt::format("channel '{}' has a third pulse of pulser '{}'; a channel records one or two (the "
                                    "first and the second path)",
                                    station.receivers[pulse.channel].name, printable_excerpt(name)));
        pulser.pulses.push_back(pulse);
    }
    for (std::size_t k = 0; k < times.pulsers.size(); ++k) {
        const Pulser& pulser = times.pulsers[k];
        if (pulser.pulses.size() < 2)
            throw DataInputError(
                fmt::format("pulser '{}' has one pulse only: its emission time is fitted, so a single pulse "
                            "constrains nothing; give at least two channels' pulses or drop the row",
                            printable_excerpt(pulser.name)),
                {path, pulser.first_line, "pulser", first_character[k]});
    }
    return times;
}

}  // namespace firnray
