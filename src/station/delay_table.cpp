#include "station/delay_table.hpp"

#include <cmath>
#include <iterator>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/parallel.hpp"

namespace firnray {

std::vector<SourceDelays> compute_delays(const RaySolver& solver, const std::vector<Receiver>& receivers,
                                         const std::vector<DelaySource>& sources, const DelayOptions& options) {
    if (receivers.empty()) throw DataInputError("no receivers");
    if (options.reference >= receivers.size()) throw DataInputError("the reference receiver is not in the station");
    std::vector<SourceDelays> out(sources.size());
    parallel_for(sources.size(), options.threads, options.control, [&](std::size_t i) {
        SourceDelays& result = out[i];
        if (!sources[i].error.empty()) {
            result.error = sources[i].error;
            return;
        }
        // A failure at one receiver (the source at its position, a numerical failure) fails only
        // that channel: its entry keeps the reason and no paths, and the others are computed.
        const auto channel_failed = [](ReceiverArrivals& arrivals, const std::string& reason) {
            arrivals.paths.clear();
            arrivals.gradients.clear();
            arrivals.error = reason;
        };
        const Point& s = sources[i].position;
        for (const Receiver& r : receivers) {
            ReceiverArrivals arrivals;
            try {
                const double n_source = solver.model().index_at(s.z);
                arrivals.paths = find_paths(solver, s, Point{r.x_m, r.y_m, r.z_m}, options.paths);
                for (const ConnectedPath& p : arrivals.paths) {
                    const double slowness = n_source / speed_of_light;
                    const double horizontal = std::sin(p.launch_zenith_rad);
                    arrivals.gradients.push_back({-slowness * horizontal * std::cos(p.azimuth_rad),
                                                  -slowness * horizontal * std::sin(p.azimuth_rad),
                                                  -slowness * std::cos(p.launch_zenith_rad)});
                }
            } catch (const InputError& e) {
                channel_failed(arrivals, fmt::format("receiver '{}': {}", r.name, e.what()));
            } catch (const NumericalError& e) {
                channel_failed(arrivals, fmt::format("receiver '{}': numerical failure: {}", r.name, e.what()));
            }
            result.receivers.push_back(std::move(arrivals));
        }
    });
    return out;
}

std::size_t SourceDelays::failed_channels() const {
    std::size_t failed = 0;
    for (const ReceiverArrivals& r : receivers) failed += !r.error.empty();
    return failed;
}

DelaySourceReader::DelaySourceReader(const std::string& path)
    : reader_(path),
      x_(reader_.table().column("x_m")),
      z_(reader_.table().column("z_m")),
      y_(reader_.table().find_column("y_m")),
      name_(reader_.table().find_column("name")) {}

bool DelaySourceReader::read_block(std::vector<DelaySource>& sources, std::size_t max_sources) {
    sources.clear();
    const CsvTable& table = reader_.table();
    if (!reader_.read_rows(rows_, max_sources)) {
        if (!any_) throw DataInputError("the source file has a header but no sources", {table.path, table.header_line, ""});
        return false;
    }
    any_ = true;
    for (const CsvRow& row : rows_) {
        DelaySource source;
        source.input_line = row.line;
        try {
            source.name = name_ ? table.text(row, *name_) : fmt::format("line {}", row.line);
            source.position.x = table.number(row, x_);
            source.position.z = table.number(row, z_);
            if (y_) source.position.y = table.number(row, *y_);
        } catch (const InputError& e) {
            source.error = e.what();
            if (source.name.empty()) source.name = fmt::format("line {}", row.line);
        }
        sources.push_back(std::move(source));
    }
    return true;
}

std::vector<DelaySource> read_delay_sources(const std::string& path) {
    DelaySourceReader reader(path);
    std::vector<DelaySource> sources, block;
    while (reader.read_block(block, 4096)) std::move(block.begin(), block.end(), std::back_inserter(sources));
    return sources;
}

}  // namespace firnray
