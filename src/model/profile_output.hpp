// Writers for index profiles and exponential fits: tables of profile samples (CSV, JSON), the fit
// report (text, JSON), the model file a fit is saved as, and SVG figures of a profile and of a
// fit. Pure functions from results to text, so the front end renders everything first and writes
// files only once all of it succeeded.
#pragma once

#include <string>
#include <vector>

#include "model/firn_model.hpp"
#include "model/fit.hpp"
#include "model/fit_data.hpp"
#include "model/profile_samples.hpp"

namespace firnray {

// Columns depth_m, z_m, n, dn_dz_per_m.
std::string profile_samples_csv(const std::vector<ProfileSample>& samples);
// The samples under the model's name and description, with the conventions used.
std::string profile_samples_json(const FirnModel& model, const std::vector<ProfileSample>& samples);
// n against depth (depth increasing downward), titled with the model's name.
std::string profile_svg(const FirnModel& model, const std::vector<ProfileSample>& samples);

// Each parameter with its 1σ uncertainty, the residual and the iterations, naming the data file.
std::string fit_report_text(const FitData& data, const ExponentialFit& fit);
// The same, with the covariance matrix.
std::string fit_report_json(const FitData& data, const ExponentialFit& fit);
// The data (as n) and the fitted curve against depth, titled with the data file's name.
std::string fit_svg(const FitData& data, const ExponentialFit& fit);

// A model file that load_model_file reads back: the fitted profile, the built-in [air] and
// [attenuation], and a comment with the uncertainties. An empty name becomes
// "exponential fit to DATA"; origin is where the file will be written.
std::string fitted_model_toml(const FitData& data, const ExponentialFit& fit, const std::string& name,
                              const std::string& origin);

}  // namespace firnray
