// Writers for the `beams` command (docs/beams.md): the beam table as text, CSV or JSON; the
// array-factor figure with grating lobes marked; the coverage map as CSV and SVG (best beam per
// source position, shadow boundary drawn); and the design scan as CSV, JSON and SVG.
#pragma once

#include <ostream>
#include <string>
#include <vector>

#include "beams/array_factor.hpp"
#include "beams/beam_coverage.hpp"
#include "beams/beam_table.hpp"
#include "model/firn_model.hpp"

namespace firnray {

// Why a wave misses an antenna, in words ("the wave turns at 12.5 m depth, below this antenna").
std::string unreached_reason(const Unreached& why);

// One line per beam (zenith, ray parameter, width) and its offsets per antenna in ns (and in
// samples with a sample rate), "-" where the wave does not reach an antenna, with the reason
// after the table. With a coverage map, its volumes.
void write_beam_table_text(std::ostream& out, const BeamTable& table, const FirnModel& model,
                           const BeamCoverage* coverage = nullptr);
// One row per beam × antenna: beam, arrival_zenith_deg, ray_parameter, half_power_width_deg,
// antenna, antenna_depth_m, offset_ns, offset_samples, not_reached (empty fields where absent).
void write_beam_table_csv(std::ostream& out, const BeamTable& table);
// {"model", "array": {...}, "beams": [{beam, arrival_zenith_deg, ray_parameter, offsets_ns,
// offsets_samples, half_power_width_deg, not_reached}], and "coverage" with a map}.
void write_beam_table_json(std::ostream& out, const BeamTable& table, const FirnModel& model,
                           const BeamCoverage* coverage = nullptr);

// One curve per beam (curves[b] belongs to table.beams[b]) against arrival zenith, each beam's
// grating lobes (grating_lobes_deg) marked.
void write_array_factor_svg(std::ostream& out, const BeamTable& table, const std::vector<ArrayFactorCurve>& curves,
                            const FirnModel& model);

// One row per cell: depth_m, distance_m, antennas_first, first_beam, first_zenith_deg,
// first_efficiency, antennas_second, second_beam, second_zenith_deg, second_efficiency and, with
// a threshold, triggered (1 when either arrival reaches it). Empty fields where no arrival.
void write_coverage_csv(std::ostream& out, const BeamCoverage& coverage, const BeamTable& table);
// Two panels (first and second arrival): each cell coloured by its best beam, cells below the
// threshold grey, the shadow boundary and the antennas drawn.
void write_coverage_svg(std::ostream& out, const BeamCoverage& coverage, const BeamTable& table,
                        const FirnModel& model);

// One row per scanned value: value, top_depth_m, spacing_m, beams, region_volume_m3,
// visible_volume_m3, efficiency_weighted_volume_m3, triggered_volume_m3, best.
void write_design_scan_csv(std::ostream& out, const DesignScan& scan);
void write_design_scan_json(std::ostream& out, const DesignScan& scan, const FirnModel& model, const MapGrid& region,
                            const BeamTable& table);
void write_design_scan_svg(std::ostream& out, const DesignScan& scan, const FirnModel& model);

}  // namespace firnray
