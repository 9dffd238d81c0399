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
#include "solver/stratified_intervals.hpp"

namespace firnray {

// What a profile holds beyond its samples: the depth intervals where n falls with depth and the
// ducts they make (solver/stratified_intervals.hpp, docs/physics.md §8), from the surface down.
struct ProfileContents {
    std::vector<IndexInversion> inversions;
    std::vector<Duct> ducts;
};
// The contents of a model's whole index profile (with its bottom, if any).
ProfileContents profile_contents(const FirnModel& model);

// Columns depth_m, z_m, n, dn_dz_per_m. When the profile has inversions, # comment lines before
// the header list them and their ducts (CSV readers, firnray's included, skip # lines).
void write_profile_samples_csv(std::ostream& out, const std::vector<ProfileSample>& samples,
                               const ProfileContents& contents = {});
std::string profile_samples_csv(const std::vector<ProfileSample>& samples, const ProfileContents& contents = {});
// The samples under the model's name and description, with the conventions used; the members
// "inversions" and "ducts" when the profile has any.
void write_profile_samples_json(std::ostream& out, const FirnModel& model, const std::vector<ProfileSample>& samples,
                                const ProfileContents& contents = {});
std::string profile_samples_json(const FirnModel& model, const std::vector<ProfileSample>& samples,
                                 const ProfileContents& contents = {});
// n against depth (depth increasing downward), titled with the model's name; the inversions
// within the samples' depths shaded and numbered as in the CSV and JSON.
void write_profile_svg(std::ostream& out, const FirnModel& model, const std::vector<ProfileSample>& samples,
                       const ProfileContents& contents = {});
std::string profile_svg(const FirnModel& model, const std::vector<ProfileSample>& samples,
                        const ProfileContents& contents = {});

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
