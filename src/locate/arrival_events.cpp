#include "locate/arrival_events.hpp"

#include <cmath>
#include <map>
#include <optional>

#include <fmt/format.h>
#include <fmt/ranges.h>

#include "core/errors.hpp"
#include "core/text.hpp"
#include "io/csv_reader.hpp"

namespace firnray {

namespace {

constexpr int unknowns = 4;  // x, y, z and the emission time

// Receivers closer than this horizontally hang on one vertical line.
constexpr double same_line_tolerance_m = 1e-6;

std::vector<std::string> receiver_names(const Station& station) {
    std::vector<std::string> names;
    for (const Receiver& r : station.receivers) names.push_back(r.name);
    return names;
}

std::size_t channel_of(const CsvTable& table, const CsvRow& row, std::size_t column, const Station& station,
                       const std::vector<std::string>& names) {
    const std::string& name = table.text(row, column);
    for (std::size_t i = 0; i < station.receivers.size(); ++i)
        if (station.receivers[i].name == name) return i;
    table.fail(row, "channel",
               fmt::format("'{}' is not a receiver of station '{}'{}", printable_excerpt(name), station.name,
                           did_you_mean(name, names)));
}

}  // namespace

int problem_line(const ArrivalEvent& event, const Station&) {
    std::map<std::size_t, int> seen;
    for (const MeasuredPulse& p : event.pulses)
        if (++seen[p.channel] == 3) return p.line;
    return event.first_line;
}

std::string arrival_event_problem(const ArrivalEvent& event, const Station& station) {
    std::map<std::size_t, std::vector<int>> lines_per_channel;
    for (const MeasuredPulse& p : event.pulses) lines_per_channel[p.channel].push_back(p.line);
    for (const auto& [channel, lines] : lines_per_channel)
        if (lines.size() > 2)
            return fmt::format("channel '{}' has a {} pulse in event '{}' (lines {}); a channel has one or two "
                               "(the first and the second path)",
                               station.receivers[channel].name, lines.size() == 3 ? "third" : "further",
                               printable_excerpt(event.name), fmt::format("{}", fmt::join(lines, ", ")));
    if (event.pulses.size() < unknowns)
        return fmt::format("event '{}' has {} pulse{}; at least {} are needed (the unknowns are x, y, z and "
                           "the emission time)",
                           printable_excerpt(event.name), event.pulses.size(),
                           event.pulses.size() == 1 ? "" : "s", unknowns);
    const Receiver& first = station.receivers[event.pulses.front().channel];
    bool one_line = true;
    for (const MeasuredPulse& p : event.pulses) {
        const Receiver& r = station.receivers[p.channel];
        if (std::hypot(r.x_m - first.x_m, r.y_m - first.y_m) > same_line_tolerance_m) one_line = false;
    }
    if (one_line)
        return fmt::format("every pulse of event '{}' is on one vertical line (string '{}'), so the "
                           "azimuth of the source is free; pulses from at least two strings are needed",
                           printable_excerpt(event.name),
                           first.string_name.empty() ? first.name : first.string_name);
    return {};
}

std::vector<ArrivalEvent> read_arrival_events(const std::string& path, const Station& station, double default_sigma_ns) {
    if (!std::isfinite(default_sigma_ns) || default_sigma_ns <= 0.0)
        throw DataInputError(fmt::format("the default timing uncertainty must be a positive number of ns, not {}",
                                         number_for_message(default_sigma_ns)),
                             {"", 0, "--timing-sigma-ns"});
    const CsvTable table = read_csv(path);
    const std::size_t event_column = table.column("event"), channel_column = table.column("channel"),
                      time_column = table.column("time_ns");
    const std::optional<std::size_t> sigma_column = table.find_column("sigma_ns");
    if (table.rows.empty()) throw DataInputError("the arrivals file has a header but no pulses", {path, table.header_line, ""});

    const std::vector<std::string> names = receiver_names(station);
    std::vector<ArrivalEvent> events;
    std::map<std::string, std::size_t> index_of_event;
    for (const CsvRow& row : table.rows) {
        // A row whose event cannot even be read becomes an event of its own, named by its line.
        std::string event_name;
        try {
            event_name = table.text(row, event_column);
            if (event_name.empty()) table.fail(row, "event", "the event name is empty");
        } catch (const InputError& e) {
            ArrivalEvent bad;
            bad.name = fmt::format("line {}", row.line);
            bad.first_line = row.line;
            bad.error = e.what();
            events.push_back(std::move(bad));
            continue;
        }
        auto [it, inserted] = index_of_event.try_emplace(event_name, events.size());
        if (inserted) {
            ArrivalEvent event;
            event.name = event_name;
            event.first_line = row.line;
            events.push_back(std::move(event));
        }
        ArrivalEvent& event = events[it->second];
        if (!event.error.empty()) continue;  // the first bad row of an event is the one reported
        try {
            MeasuredPulse pulse;
            pulse.line = row.line;
            pulse.channel = channel_of(table, row, channel_column, station, names);
            pulse.time_s = table.number(row, time_column) * 1e-9;
            double sigma_ns = default_sigma_ns;
            if (sigma_column && !table.text(row, *sigma_column).empty()) {
                sigma_ns = table.number(row, *sigma_column);
                if (sigma_ns <= 0.0)
                    table.fail(row, "sigma_ns",
                               fmt::format("{} is not a timing uncertainty: it must be above 0 ns",
                                           number_for_message(sigma_ns)));
            }
            pulse.sigma_s = sigma_ns * 1e-9;
            event.pulses.push_back(pulse);
        } catch (const InputError& e) {
            event.error = fmt::format("{} (event '{}' is not fitted)", e.what(), printable_excerpt(event.name));
            event.pulses.clear();
        }
    }
    for (ArrivalEvent& event : events)
        if (event.error.empty()) {
            const std::string problem = arrival_event_problem(event, station);
            // A third pulse is located at its own line, the other problems at the event's first.
            if (!problem.empty()) event.error = fmt::format("{}:{}: {}", path, problem_line(event, station), problem);
        }
    return events;
}

}  // namespace firnray
