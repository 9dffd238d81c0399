// Writers for index profiles and exponential fits: tables of profile samples (CSV, JSON), the fit
// report (text, JSON), the model file a fit is saved as, and SVG figures of a profile and of a
// fit. Each renders to a std::ostream; the std::string wrappers of the same name let the front
// end render everything first and write files only once all of it succeeded.
#pragma once

#include <ostream>
#include <string>
#include <vector>

#include "model/firn_model.hpp"
#include "model/fit.hpp"
#include "model/fit_data.hpp"
#include "model/profile_samples.hpp"

namespace firnray {

// Columns depth_m, z_m, n, dn_dz_per_m.
void write_profile_samples_csv(std::ostream& out, const std::vector<ProfileSample>& samples);
std::string profile_samples_csv(const std::vector<ProfileSample>& samples);
// The samples under the model's name and description, with the conventions used.
void write_profile_samples_json(std::ostream& out, const FirnModel& model, const std::vector<ProfileSample>& samples);
std::string profile_samples_json(const FirnModel& model, const std::vector<ProfileSample>& samples);
// n against depth (depth increasing downward), titled with the model's name.
void write_profile_svg(std::ostream& out, const FirnModel& model, const std::vector<ProfileSample>& samples);
std::string profile_svg(const FirnModel& model, const std::vector<ProfileSample>& samples);

// Each parameter with its 1σ uncertainty, the residual and the iterations, naming the data file.
void write_fit_report_text(std::ostream& out, const FitData& data, const ExponentialFit& fit);
std::string fit_report_text(const FitData& data, const ExponentialFit& fit);
// The same, with the covariance matrix.
void write_fit_report_json(std::ostream& out, const FitData& data, const ExponentialFit& fit);
std::string fit_report_json(const FitData& data, const ExponentialFit& fit);
// The data (as n) and the fitted curve against depth, titled with the data file's name.
void write_fit_svg(std::ostream& out, const FitData& data, const ExponentialFit& fit);
std::string fit_svg(const FitData& data, const ExponentialFit& fit);

// A model file that load_model_file reads back: the fitted profile, the built-in [air] and
// [attenuation], and a comment with the uncertainties. An empty name becomes
// "exponential fit to DATA"; origin is where the file will be written. (TOML is written by
// model/model_file's model_to_toml; this adds the fit's comment and the defaults around it.)
void write_fitted_model_toml(std::ostream& out, const FitData& data, const ExponentialFit& fit, const std::string& name,
                             const std::string& origin);
std::string fitted_model_toml(const FitData& data, const ExponentialFit& fit, const std::string& name,
                              const std::string& origin);

}  // namespace firnray
