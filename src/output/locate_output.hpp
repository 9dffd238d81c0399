// Writers of `firnray locate`: the reconstructed sources of a batch of events as JSON (members
// fixed by the issue that introduced the command: event, x_m, y_m, z_m, emission_time_ns, chi2,
// ndof, covariance_m2, the path of each pulse, alternatives, error), CSV (one event per line) and
// text, with distance, depth, zenith and azimuth from the station centre and their 1σ.
#pragma once

#include <optional>
#include <ostream>
#include <vector>

#include "locate/source_fit.hpp"
#include "model/firn_model.hpp"
#include "uncertainty/locate_uncertainty.hpp"

namespace firnray {

enum class LocateFormat { text, csv, json };

// With locate --uncertainty or --uncertainty-samples: how the profile's part was made, and one
// entry per fit (empty for a failed event). Without it (null) every output is as described here.
struct LocateProfileUncertainty {
    UncertaintyReport report;
    std::vector<std::optional<ProfilePositionSpread>> events;
};

// With the profile's part, each fitted event also has covariance_profile_m2 (3 × 3, null entries
// where it cannot be given), sigma_{distance,depth,zenith,azimuth}_profile_* and *_combined_*
// (profile and timing parts together), profile_models, profile_absent_models and
// profile_matching_changed; the document an `uncertainty` object.
void write_locate_json(std::ostream& out, const std::vector<EventFit>& fits, const SourceLocator& locator,
                       const FirnModel& model, const LocateProfileUncertainty* uncertainty = nullptr);
// Columns: event, input_line, x_m, y_m, z_m, emission_time_ns, chi2, ndof, distance_m,
// sigma_distance_m, depth_m, sigma_depth_m, zenith_deg, sigma_zenith_deg, azimuth_deg,
// sigma_azimuth_deg, cov_xx_m2 … cov_zz_m2, pulses ("A1:direct:+0.12;…", residuals in ns),
// alternatives ("x y z chi2;…"), error. With the profile's part: a "# uncertainty:" comment line
// first, and after cov_zz_m2 the columns cov_profile_xx_m2 … cov_profile_zz_m2,
// sigma_distance_profile_m, sigma_depth_profile_m, sigma_zenith_profile_deg,
// sigma_azimuth_profile_deg, sigma_distance_combined_m, sigma_depth_combined_m,
// sigma_zenith_combined_deg, sigma_azimuth_combined_deg, profile_models, profile_absent_models,
// profile_matching_changed (empty where a value cannot be given).
void write_locate_csv(std::ostream& out, const std::vector<EventFit>& fits, const SourceLocator& locator,
                      const LocateProfileUncertainty* uncertainty = nullptr);
void write_locate_text(std::ostream& out, const std::vector<EventFit>& fits, const SourceLocator& locator,
                       const FirnModel& model, const LocateProfileUncertainty* uncertainty = nullptr);

}  // namespace firnray
