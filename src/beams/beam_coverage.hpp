// Which source positions each trigger beam of a phased array catches, and how much of the
// coherent gain survives there: a map over horizontal distance from the array's string × source
// depth (the grid of the shadow maps), for the first and the second arrival at the antennas, with
// the volume the trigger sees above an efficiency threshold; and a design scan of that volume
// against the array's depth, its spacing or its number of beams.
#pragma once

#include <cstdint>
#include <optional>
#include <vector>

#include "beams/coherent_sum.hpp"
#include "beams/phased_array.hpp"
#include "core/cancel.hpp"
#include "solver/ray_solver.hpp"
#include "station/visibility_map.hpp"

namespace firnray {

struct CoverageOptions {
    PulseShape pulse;
    std::optional<double> threshold;   // efficiency in (0, 1]: the trigger sees a cell at or above it
    double azimuth_deg = 0.0;          // direction of the map plane from the string (0 = +x, 90 = +y)
    int ray_parameters = 1500;         // samples per arrival table (station/map_tables.hpp)
    // As in the shadow maps: the most turns and reflections per path (each counts one), and
    // whether paths reflected at the model's bottom count.
    int max_bounces = 4;
    bool bottom_paths = true;
    int threads = 1;
    RunControl control;
};

// One source position. Beam −1 and efficiency NaN where no antenna has that arrival.
struct CoverageCell {
    std::int16_t first_beam = -1, second_beam = -1;
    std::uint16_t antennas_first = 0, antennas_second = 0;  // antennas with a first (second) arrival
    float first_efficiency = NAN, second_efficiency = NAN;
};

struct BeamCoverage {
    MapGrid grid;
    std::vector<CoverageCell> cells;   // row-major: depth row * distance_cells + column
    std::vector<double> boundary_m;    // per depth row: the largest distance any antenna sees (shadow boundary)
    std::optional<double> threshold;
    std::size_t beams = 0;
    // Volumes of the cylinder (annulus) around the string (station/depth_scan.hpp: ring_cell_volume).
    double region_volume_m3 = 0.0;
    double visible_volume_m3 = 0.0;              // at least one antenna has an arrival
    double efficiency_weighted_volume_m3 = 0.0;  // Σ volume × best first-arrival efficiency
    std::optional<double> triggered_volume_m3;         // first-arrival efficiency >= threshold
    std::optional<double> triggered_either_volume_m3;  // first or second arrival >= threshold

    const CoverageCell& at(int row, int column) const {
        return cells[static_cast<std::size_t>(row) * grid.distance_cells + column];
    }
};

// Each antenna's arrivals come from an arrival table at its depth; the beams' delays are `beams`
// (plane_wave_offsets of the same array). At each cell the best beam is the one with the highest
// coherent-sum efficiency among the two whose residuals spread least (a ranking that needs no
// pulse evaluation). Throws DataInputError for an empty beam list (or more than 1000 beams), a grid out of range or a
// threshold outside (0, 1].
BeamCoverage compute_beam_coverage(const RaySolver& solver, const PhasedArray& array,
                                   const std::vector<PlaneWaveOffsets>& beams, const MapGrid& grid,
                                   const CoverageOptions& options);

enum class DesignParameter { depth, spacing, beam_count };
// "depth", "spacing", "beams"; DataInputError otherwise (with a did-you-mean).
DesignParameter parse_design_parameter(const std::string& text);
const char* to_string(DesignParameter parameter);

struct DesignScanOptions {
    DesignParameter parameter = DesignParameter::depth;
    std::vector<double> values;             // top-antenna depths (m), spacings (m) or beam counts
    std::vector<double> beam_zeniths_deg;   // the beams when the scan is not over their number
    double first_zenith_deg = 60.0, last_zenith_deg = 120.0;  // the beams' span for a scan over their number
    MapGrid region;
    CoverageOptions coverage;
};

struct DesignScanRow {
    double value = 0.0;
    std::size_t beams = 0;
    double top_depth_m = 0.0, spacing_m = 0.0;
    double region_volume_m3 = 0.0, visible_volume_m3 = 0.0, efficiency_weighted_volume_m3 = 0.0;
    std::optional<double> triggered_volume_m3;
};

struct DesignScan {
    DesignParameter parameter = DesignParameter::depth;
    std::vector<DesignScanRow> rows;
    std::size_t best = 0;  // the largest efficiency-weighted volume (the first on a tie)
};

// One coverage map per value. Beam counts must be whole numbers 1..1000.
DesignScan scan_array_design(const RaySolver& solver, const StratifiedProfile& profile, const PhasedArray& array,
                             const DesignScanOptions& options);

}  // namespace firnray
