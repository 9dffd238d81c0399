#include "beams/beam_coverage.hpp"

#include <algorithm>
#include <cmath>
#include <memory>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/parallel.hpp"
#include "core/text.hpp"
#include "station/map_tables.hpp"
#include "station/depth_scan.hpp"

namespace firnray {

namespace {

// Beams refined in full at each cell: the spread of the residuals about their mean (their sum of
// squares, weighted by how many antennas add) ranks the beams by how well their delays match at
// no cost in exponentials, and the best beam is among the first two
// (tests/beams/test_beam_coverage.cpp checks the map against a search over every beam).
constexpr std::size_t beams_refined = 2;
// Beam indices are kept in 16 bits per cell.
constexpr std::size_t max_beams = 1000;

// A rank for one beam: the mean square residual about the mean, raised for antennas that add nothing.
double mismatch(const std::vector<double>& residuals, std::size_t antennas, double sigma) {
    double sum = 0.0, square = 0.0, origin = NAN;
    std::size_t used = 0;
    for (std::size_t k = 0; k < antennas; ++k)
        if (std::isfinite(residuals[k])) {
            if (used == 0) origin = residuals[k];  // residuals are absolute times: keep the squares small
            const double r = residuals[k] - origin;
            sum += r;
            square += r * r;
            ++used;
        }
    if (used == 0) return INFINITY;
    const double mean = sum / static_cast<double>(used);
    const double variance = std::max(0.0, square / static_cast<double>(used) - mean * mean);
    // An antenna that adds nothing costs as much as one a few σ off.
    return (variance * static_cast<double>(used) + 9.0 * sigma * sigma * static_cast<double>(antennas - used)) /
           static_cast<double>(antennas);
}

// An upper bound of a beam's efficiency: at any time t the squared distances (t − r_k)² add up to
// at least the sum of squares about the mean, S; the sum of pulses is largest when all of S falls
// on one antenna, so efficiency <= (M − 1 + exp(−S / 2σ²)) / N for M antennas that add.
double efficiency_bound(const std::vector<double>& residuals, std::size_t antennas, double sigma) {
    double sum = 0.0, square = 0.0, origin = NAN;
    std::size_t used = 0;
    for (std::size_t k = 0; k < antennas; ++k)
        if (std::isfinite(residuals[k])) {
            if (used == 0) origin = residuals[k];
            const double r = residuals[k] - origin;
            sum += r;
            square += r * r;
            ++used;
        }
    if (used == 0) return 0.0;
    const double spread = std::max(0.0, square - sum * sum / static_cast<double>(used));
    return (static_cast<double>(used) - 1.0 + std::exp(-spread / (2.0 * sigma * sigma))) / static_cast<double>(antennas);
}

struct BestBeam {
    int beam = -1;
    double efficiency = NAN;
};

// The best beam for one set of arrival times (NaN: no arrival at that antenna).
BestBeam best_beam(const std::vector<double>& times, const std::vector<std::vector<double>>& beam_offsets,
                   std::size_t antennas, const PulseShape& pulse, std::vector<double>& residuals,
                   std::vector<std::pair<double, int>>& ranking) {
    ranking.clear();
    for (std::size_t b = 0; b < beam_offsets.size(); ++b) {
        for (std::size_t k = 0; k < antennas; ++k) residuals[k] = times[k] - beam_offsets[b][k];
        ranking.emplace_back(-mismatch(residuals, antennas, pulse.sigma_s()), static_cast<int>(b));
    }
    const std::size_t refined = std::min(beams_refined, ranking.size());
    std::partial_sort(ranking.begin(), ranking.begin() + static_cast<std::ptrdiff_t>(refined), ranking.end(),
                      [](const auto& a, const auto& b) { return a.first > b.first || (a.first == b.first && a.second < b.second); });
    BestBeam best;
    for (std::size_t i = 0; i < refined; ++i) {
        const int b = ranking[i].second;
        for (std::size_t k = 0; k < antennas; ++k) residuals[k] = times[k] - beam_offsets[static_cast<std::size_t>(b)][k];
        if (best.beam >= 0 && efficiency_bound(residuals, antennas, pulse.sigma_s()) <= best.efficiency) continue;
        const double efficiency = coherent_sum_efficiency(residuals, antennas, pulse);
        if (best.beam < 0 || efficiency > best.efficiency || (efficiency == best.efficiency && b < best.beam)) {
            best.beam = b;
            best.efficiency = efficiency;
        }
    }
    return best;
}

}  // namespace

BeamCoverage compute_beam_coverage(const RaySolver& solver, const PhasedArray& array,
                                   const std::vector<PlaneWaveOffsets>& beams, const MapGrid& grid,
                                   const CoverageOptions& options) {
    grid.validate();
    if (beams.empty()) throw DataInputError("a coverage map needs at least one beam", {"", 0, "beams"});
    if (beams.size() > max_beams)
        throw DataInputError(fmt::format("a coverage map takes at most {} beams, not {}", max_beams, beams.size()),
                             {"", 0, "beams"});
    if (options.threshold && !(*options.threshold > 0.0 && *options.threshold <= 1.0))
        throw DataInputError(fmt::format("an efficiency threshold must be in (0, 1], not {}",
                                         number_for_message(*options.threshold)),
                             {"", 0, "threshold"});
    const std::size_t antennas = array.antennas.size();
    for (const PlaneWaveOffsets& beam : beams)
        if (beam.offsets_s.size() != antennas)
            throw DataInputError("the beams were computed for another array", {"", 0, "beams"});

    std::vector<std::vector<double>> beam_offsets(beams.size(), std::vector<double>(antennas, NAN));
    for (std::size_t b = 0; b < beams.size(); ++b)
        for (std::size_t k = 0; k < antennas; ++k)
            if (beams[b].offsets_s[k]) beam_offsets[b][k] = *beams[b].offsets_s[k];

    std::vector<double> source_z(static_cast<std::size_t>(grid.depth_cells));
    for (int j = 0; j < grid.depth_cells; ++j) source_z[static_cast<std::size_t>(j)] = -grid.depth_at(j);
    // The tables of the shadow maps (the engine that is exact for the model: ducts, bottom, deep ice).
    MapTableOptions table_options;
    table_options.ray_parameters = options.ray_parameters;
    table_options.max_bounces = options.max_bounces;
    table_options.bottom_paths = options.bottom_paths;
    table_options.threads = options.threads;
    table_options.control.cancel = options.control.cancel;
    std::vector<double> antenna_z;
    for (const Receiver& antenna : array.antennas) antenna_z.push_back(antenna.z_m);
    const MapTables map_tables(solver, antenna_z, source_z, table_options);
    std::vector<const ReceiverDepthTable*> tables;
    for (const Receiver& antenna : array.antennas) tables.push_back(&map_tables.at(antenna.z_m));

    const Receiver& top = array.antennas.front();
    const double azimuth = deg_to_rad(options.azimuth_deg);
    const double ux = std::cos(azimuth), uy = std::sin(azimuth);

    BeamCoverage coverage;
    coverage.grid = grid;
    coverage.threshold = options.threshold;
    coverage.beams = beams.size();
    coverage.cells.assign(grid.cells(), CoverageCell{});
    parallel_for(static_cast<std::size_t>(grid.depth_cells), options.threads, options.control, [&](std::size_t j) {
        std::vector<MapArrival> found;
        std::vector<double> first(antennas), second(antennas), residuals(antennas);
        std::vector<std::pair<double, int>> ranking;
        for (int i = 0; i < grid.distance_cells; ++i) {
            const double r = grid.distance_at(i);
            const double xs = top.x_m + r * ux, ys = top.y_m + r * uy;
            CoverageCell& cell = coverage.cells[j * static_cast<std::size_t>(grid.distance_cells) + static_cast<std::size_t>(i)];
            for (std::size_t k = 0; k < antennas; ++k) {
                tables[k]->arrivals(j, std::hypot(xs - array.antennas[k].x_m, ys - array.antennas[k].y_m), found);
                first[k] = found.empty() ? NAN : found[0].time_s;
                second[k] = found.size() < 2 ? NAN : found[1].time_s;
                cell.antennas_first += found.empty() ? 0 : 1;
                cell.antennas_second += found.size() < 2 ? 0 : 1;
            }
            if (cell.antennas_first > 0) {
                const BestBeam best = best_beam(first, beam_offsets, antennas, options.pulse, residuals, ranking);
                cell.first_beam = static_cast<std::int16_t>(best.beam);
                cell.first_efficiency = static_cast<float>(best.efficiency);
            }
            if (cell.antennas_second > 0) {
                const BestBeam best = best_beam(second, beam_offsets, antennas, options.pulse, residuals, ranking);
                cell.second_beam = static_cast<std::int16_t>(best.beam);
                cell.second_efficiency = static_cast<float>(best.efficiency);
            }
        }
    });

    coverage.boundary_m.assign(static_cast<std::size_t>(grid.depth_cells), NAN);
    for (int j = 0; j < grid.depth_cells; ++j)
        for (const auto& table : tables) {
            const double reach = table->max_reach_m(static_cast<std::size_t>(j));
            if (std::isfinite(reach) || std::isinf(reach))
                coverage.boundary_m[static_cast<std::size_t>(j)] =
                    std::isnan(coverage.boundary_m[static_cast<std::size_t>(j)])
                        ? reach
                        : std::max(coverage.boundary_m[static_cast<std::size_t>(j)], reach);
        }

    if (options.threshold) coverage.triggered_volume_m3 = coverage.triggered_either_volume_m3 = 0.0;
    for (int j = 0; j < grid.depth_cells; ++j)
        for (int i = 0; i < grid.distance_cells; ++i) {
            const double volume = ring_cell_volume(grid, i);
            const CoverageCell& cell = coverage.at(j, i);
            coverage.region_volume_m3 += volume;
            if (cell.antennas_first == 0) continue;
            coverage.visible_volume_m3 += volume;
            coverage.efficiency_weighted_volume_m3 += volume * cell.first_efficiency;
            if (!options.threshold) continue;
            const bool first_seen = cell.first_efficiency >= *options.threshold;
            const bool second_seen = cell.antennas_second > 0 && cell.second_efficiency >= *options.threshold;
            if (first_seen) *coverage.triggered_volume_m3 += volume;
            if (first_seen || second_seen) *coverage.triggered_either_volume_m3 += volume;
        }
    return coverage;
}

DesignParameter parse_design_parameter(const std::string& text) {
    if (text == "depth") return DesignParameter::depth;
    if (text == "spacing") return DesignParameter::spacing;
    if (text == "beams") return DesignParameter::beam_count;
    throw DataInputError(fmt::format("unknown design parameter '{}'{}; use depth, spacing or beams",
                                     printable_excerpt(text), did_you_mean(text, {"depth", "spacing", "beams"})),
                         {"", 0, "scan"});
}

const char* to_string(DesignParameter parameter) {
    switch (parameter) {
        case DesignParameter::depth: return "depth";
        case DesignParameter::spacing: return "spacing";
        case DesignParameter::beam_count: return "beams";
    }
    return "depth";
}

DesignScan scan_array_design(const RaySolver& solver, const StratifiedProfile& profile, const PhasedArray& array,
                             const DesignScanOptions& options) {
    if (options.values.empty()) throw DataInputError("no values to scan", {"", 0, "scan-values"});
    DesignScan scan;
    scan.parameter = options.parameter;
    for (double value : options.values) {
        PhasedArray candidate = array;
        std::vector<double> zeniths = options.beam_zeniths_deg;
        switch (options.parameter) {
            case DesignParameter::depth: candidate = array_at_depth(array, value); break;
            case DesignParameter::spacing: candidate = array_with_spacing(array, value); break;
            case DesignParameter::beam_count:
                if (value != std::floor(value) || value < 1.0 || value > 1000.0)
                    throw DataInputError(fmt::format("a number of beams must be a whole number 1 to 1000, not {}",
                                                     number_for_message(value)),
                                         {"", 0, "scan-values"});
                zeniths = evenly_spaced_zeniths(static_cast<int>(value), options.first_zenith_deg, options.last_zenith_deg);
                break;
        }
        std::vector<PlaneWaveOffsets> beams;
        for (double zenith : zeniths) beams.push_back(plane_wave_offsets(profile, candidate, zenith));
        const BeamCoverage coverage = compute_beam_coverage(solver, candidate, beams, options.region, options.coverage);
        DesignScanRow row;
        row.value = value;
        row.beams = beams.size();
        row.top_depth_m = -candidate.antennas.front().z_m;
        row.spacing_m = candidate.mean_spacing_m();
        row.region_volume_m3 = coverage.region_volume_m3;
        row.visible_volume_m3 = coverage.visible_volume_m3;
        row.efficiency_weighted_volume_m3 = coverage.efficiency_weighted_volume_m3;
        row.triggered_volume_m3 = coverage.triggered_volume_m3;
        scan.rows.push_back(row);
        if (row.efficiency_weighted_volume_m3 > scan.rows[scan.best].efficiency_weighted_volume_m3)
            scan.best = scan.rows.size() - 1;
    }
    return scan;
}

}  // namespace firnray
