#include "locate/resolution_map.hpp"

#include <algorithm>
#include <cmath>

#include <Eigen/Dense>
#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/parallel.hpp"
#include "core/text.hpp"
#include "station/delay_table.hpp"

namespace firnray {

void FisherOptions::validate() const {
    if (!(std::isfinite(timing_sigma_ns) && timing_sigma_ns > 0.0))
        throw DataInputError(fmt::format("the timing uncertainty must be above 0 ns, not {}", number_for_message(timing_sigma_ns)),
                             {"", 0, "timing_sigma_ns"});
    if (pulses_per_channel < 1 || pulses_per_channel > 8)
        throw DataInputError(fmt::format("pulses per channel must be 1..8, not {}", pulses_per_channel),
                             {"", 0, "pulses_per_channel"});
    if (!(std::isfinite(pulse_width_ns) && pulse_width_ns >= 0.0))
        throw DataInputError(fmt::format("the pulse width must be >= 0 ns, not {}", number_for_message(pulse_width_ns)),
                             {"", 0, "pulse_width_ns"});
}

CramerRao cramer_rao_bound(const RaySolver& solver, std::span<const Receiver> receivers, const Point& source,
                           const Point& centre, const FisherOptions& options) {
    options.validate();
    const auto& bottom = solver.model().bottom;
    if (bottom && source.z < bottom->z_m)
        throw DataInputError(fmt::format("the source at z = {} m is below the bottom (z = {} m)",
                                         number_for_message(source.z), number_for_message(bottom->z_m)));
    DelaySource delay_source;
    delay_source.position = source;
    DelayOptions delay_options;
    delay_options.paths = options.paths;
    const std::vector<Receiver> all(receivers.begin(), receivers.end());
    const SourceDelays delays = compute_delays(solver, all, {delay_source}, delay_options).front();

    // Fisher information of (x, y, z, t0): Σ ∇T ∇Tᵀ / σ² over the pulses (t0 in ns, x in m).
    Eigen::Matrix4d information = Eigen::Matrix4d::Zero();
    const double weight = 1.0 / (options.timing_sigma_ns * options.timing_sigma_ns);
    CramerRao bound;
    for (const ReceiverArrivals& arrivals : delays.receivers) {
        int recorded = 0;
        double last_time_ns = -1e300;
        for (std::size_t k = 0; k < arrivals.paths.size() && recorded < options.pulses_per_channel; ++k) {
            const double time_ns = arrivals.paths[k].time_s * 1e9;
            if (time_ns - last_time_ns < options.pulse_width_ns) continue;  // merged into the previous pulse
            last_time_ns = time_ns;
            ++recorded;
            const auto& g = arrivals.gradients[k];
            const Eigen::Vector4d row(g.dx * 1e9, g.dy * 1e9, g.dz * 1e9, 1.0);
            information += weight * row * row.transpose();
        }
        bound.pulses += recorded;
    }
    if (bound.pulses < 4) {
        bound.reason = fmt::format("{} pulse{}: at least 4 are needed", bound.pulses, bound.pulses == 1 ? "" : "s");
        return bound;
    }
    const Eigen::SelfAdjointEigenSolver<Eigen::Matrix4d> eigen(information);
    const auto& values = eigen.eigenvalues();
    if (!(values.minCoeff() > 1e-12 * values.maxCoeff())) {
        bound.reason = "the pulses leave a direction of the source free (e.g. all on one string)";
        return bound;
    }
    const Eigen::Matrix4d covariance =
        eigen.eigenvectors() * values.cwiseInverse().asDiagonal() * eigen.eigenvectors().transpose();
    for (int i = 0; i < 3; ++i)
        for (int j = 0; j < 3; ++j) bound.covariance_m2[i][j] = 0.5 * (covariance(i, j) + covariance(j, i));
    bound.resolved = true;
    bound.view = view_from_centre(centre, source, bound.covariance_m2);
    return bound;
}

ResolutionMap compute_resolution_map(const RaySolver& solver, std::span<const Receiver> receivers, const MapGrid& grid,
                                     const ResolutionOptions& options) {
    grid.validate();
    options.fisher.validate();
    if (!std::isfinite(options.azimuth_deg))
        throw DataInputError("the azimuth of the map must be a finite number", {"", 0, "azimuth_deg"});
    ResolutionMap map;
    map.grid = grid;
    map.azimuth_deg = options.azimuth_deg;
    map.centre = station_centre(receivers);
    map.timing_sigma_ns = options.fisher.timing_sigma_ns;
    map.cells.resize(grid.cells());
    const double azimuth = deg_to_rad(options.azimuth_deg);
    const auto& bottom = solver.model().bottom;
    parallel_for(grid.cells(), options.threads, options.control, [&](std::size_t cell) {
        const int row = static_cast<int>(cell / static_cast<std::size_t>(grid.distance_cells));
        const int column = static_cast<int>(cell % static_cast<std::size_t>(grid.distance_cells));
        const double r = grid.distance_at(column), depth = grid.depth_at(row);
        const Point source{map.centre.x + r * std::cos(azimuth), map.centre.y + r * std::sin(azimuth), -depth};
        if (bottom && source.z < bottom->z_m) {
            map.cells[cell].reason = "below the bottom";
            return;
        }
        map.cells[cell] = cramer_rao_bound(solver, receivers, source, map.centre, options.fisher);
    });
    return map;
}

ResolutionSummary summarize_resolution(const ResolutionMap& map) {
    ResolutionSummary summary;
    summary.cells = map.cells.size();
    std::vector<double> distance, depth;
    for (const CramerRao& cell : map.cells) {
        if (!cell.resolved) continue;
        distance.push_back(cell.view.sigma_distance_m);
        depth.push_back(cell.view.sigma_depth_m);
    }
    summary.resolved_cells = distance.size();
    summary.unresolved_fraction =
        summary.cells == 0 ? 1.0 : 1.0 - static_cast<double>(summary.resolved_cells) / static_cast<double>(summary.cells);
    // The median of an even count is the mean of the two middle values.
    const auto median = [](std::vector<double>& values) -> std::optional<double> {
        if (values.empty()) return std::nullopt;
        std::sort(values.begin(), values.end());
        const std::size_t half = values.size() / 2;
        return values.size() % 2 == 1 ? values[half] : 0.5 * (values[half - 1] + values[half]);
    };
    summary.median_sigma_distance_m = median(distance);
    summary.median_sigma_depth_m = median(depth);
    return summary;
}

std::vector<Receiver> receivers_at_depth(std::span<const Receiver> receivers, double top_depth_m) {
    if (receivers.empty()) throw DataInputError("the station has no receivers to move to a depth");
    if (!(std::isfinite(top_depth_m) && top_depth_m >= 0.0))
        throw DataInputError(fmt::format("{} is not a receiver depth (m, positive down, >= 0)", number_for_message(top_depth_m)),
                             {"", 0, "depth"});
    double top_z = receivers.front().z_m;
    for (const Receiver& r : receivers) top_z = std::max(top_z, r.z_m);
    const double shift = -top_depth_m - top_z;
    std::vector<Receiver> moved(receivers.begin(), receivers.end());
    for (Receiver& r : moved) {
        r.z_m += shift;
        r.in_air = false;  // the shallowest is at or below the surface, so every one is
    }
    return moved;
}

DepthResolutionScan scan_resolution_by_depth(const RaySolver& solver, const Station& station,
                                             std::span<const double> top_depths_m, const MapGrid& grid,
                                             const ResolutionOptions& options) {
    DepthResolutionScan scan;
    scan.station = station.name;
    scan.grid = grid;
    scan.azimuth_deg = options.azimuth_deg;
    scan.timing_sigma_ns = options.fisher.timing_sigma_ns;
    for (double depth : top_depths_m) {
        options.control.throw_if_cancelled();
        const std::vector<Receiver> moved = receivers_at_depth(station.receivers, depth);
        scan.rows.push_back(summarize_resolution(compute_resolution_map(solver, moved, grid, options)));
    }
    return scan;
}

}  // namespace firnray
