// Writers of `firnray locate`: the reconstructed sources of a batch of events as JSON (members
// fixed by the issue that introduced the command: event, x_m, y_m, z_m, emission_time_ns, chi2,
// ndof, covariance_m2, the path of each pulse, alternatives, error), CSV (one event per line) and
// text, with distance, depth, zenith and azimuth from the station centre and their 1σ.
#pragma once

#include <ostream>
#include <vector>

#include "locate/source_fit.hpp"
#include "model/firn_model.hpp"

namespace firnray {

enum class LocateFormat { text, csv, json };

void write_locate_json(std::ostream& out, const std::vector<EventFit>& fits, const SourceLocator& locator,
                       const FirnModel& model);
// Columns: event, input_line, x_m, y_m, z_m, emission_time_ns, chi2, ndof, distance_m,
// sigma_distance_m, depth_m, sigma_depth_m, zenith_deg, sigma_zenith_deg, azimuth_deg,
// sigma_azimuth_deg, cov_xx_m2 … cov_zz_m2, pulses ("A1:direct:+0.12;…", residuals in ns),
// alternatives ("x y z chi2;…"), error.
void write_locate_csv(std::ostream& out, const std::vector<EventFit>& fits, const SourceLocator& locator);
void write_locate_text(std::ostream& out, const std::vector<EventFit>& fits, const SourceLocator& locator,
                       const FirnModel& model);

}  // namespace firnray
