// Calibration of the index profile on pulser arrival times (docs/calibrate.md): a weighted
// least-squares fit (Levenberg–Marquardt) of the free profile parameters and one emission offset
// per pulser, each pulse matched to the predicted path that fits it best, optionally together
// with a measured index or density log, with the covariance of the fitted parameters.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "calibrate/pulser_times.hpp"
#include "core/cancel.hpp"
#include "model/firn_model.hpp"
#include "model/fit_data.hpp"
#include "paths/connected_path.hpp"
#include "paths/find_paths.hpp"
#include "station/station.hpp"

namespace firnray {

// Which profile kind is fitted; the start model must be of that kind.
enum class CalibrationKind { exponential, layered };
// "exponential" or "layered"; throws DataInputError (naming --fit, with "did you mean") otherwise.
CalibrationKind parse_calibration_kind(const std::string& text);
const char* to_string(CalibrationKind kind);

// A parameter held fixed: at `value`, or at its start value when empty.
struct FixedParameter {
    std::string name;
    std::optional<double> value;
};

// A measured log fitted together with the times: its own χ² term Σ((n_log − n_model)/sigma_n)².
struct DensityLogTerm {
    FitData data;          // depth and n, or density with its rule (model/fit_data.hpp)
    double sigma_n = 0.0;  // 1σ of each index value of the log, > 0
};

struct CalibrationOptions {
    std::vector<FixedParameter> fixed;
    std::optional<DensityLogTerm> density_log;
    PathOptions paths;
    // Two predicted paths closer in time than this cannot be told apart in a recorded pulse: a
    // pulse matched to either is matched to the earlier and flagged unresolved. 0..10000 ns.
    double pulse_width_ns = 10.0;
    // Central-difference step of parameter k: relative_step × max(|θk|, 1) in the parameter's
    // unit (1.8e-4 for an index near 1.8, 3.7e-3 m for a 37 m scale depth).
    double relative_step = 1e-4;
    int max_iterations = 100;
    int threads = 1;
    RunControl control;
};

// One measured pulse after the fit.
struct PulseResidual {
    std::size_t pulser = 0;      // index into CalibrationResult::pulsers
    std::size_t channel = 0;     // index of the receiver in the station
    int line = 0;                // line in the times file
    double measured_ns = 0.0;
    double predicted_ns = 0.0;   // travel time of the matched path plus the pulser's offset
    double residual_ns = 0.0;    // measured − predicted
    double sigma_ns = 0.0;
    PathKind path_kind = PathKind::direct;
    int arrival_order = 1;       // 1: the first path to arrive at this channel, 2: the second, …
    int paths_found = 0;         // how many paths the fitted model has for this pair
    // Another predicted path arrives within the pulse width of the matched one: the pulse is
    // matched to the earlier of them and cannot tell them apart.
    bool unresolved = false;
    double pulser_depth_m = 0.0;
    double horizontal_distance_m = 0.0;  // from the pulser to the channel
};

struct PulserFit {
    std::string name;
    Point position;
    double offset_ns = 0.0;  // fitted emission time on the pulser's clock
    double offset_sigma_ns = 0.0;
    std::size_t pulses = 0;
};

struct CalibratedParameter {
    std::string name;
    double start = 0.0;  // value in the start model
    double value = 0.0;
    double sigma = 0.0;  // 1σ from the covariance; 0 when fixed
    bool fixed = false;
};

// One point of the density log after the fit.
struct LogResidual {
    double depth_m = 0.0;
    double measured_n = 0.0;  // the log as n (converted from density when the log is a density)
    double predicted_n = 0.0;
    double residual = 0.0;    // measured − predicted
};

struct CalibrationResult {
    CalibrationKind kind = CalibrationKind::exponential;
    std::vector<CalibratedParameter> parameters;  // every parameter of the profile, in its order
    std::vector<std::string> free_names;          // the fitted ones, in the same order
    // (JᵀWJ)⁻¹ of the free parameters, the pulser offsets marginalised (W = 1/σ²). Not rescaled by
    // χ²/ndof: the timing and log sigmas are taken at their word.
    std::vector<std::vector<double>> covariance;
    double chi2 = 0.0, chi2_times = 0.0, chi2_log = 0.0;
    int ndof = 0;  // pulses + log points − free parameters − pulsers
    int iterations = 0;
    std::size_t unresolved_pulses = 0;
    double pulse_width_ns = 0.0;
    std::vector<PulserFit> pulsers;
    std::vector<PulseResidual> residuals;  // one per pulse, in the order of the pulsers and their rows
    std::vector<LogResidual> log_residuals;
    std::string times_path, log_path;
    FirnModel start_model;
    // The start model with the fitted values and, in `uncertainty`, the covariance of the free ones.
    FirnModel fitted_model;
};

// Fits the start model's profile to the pulser times. Throws ModelInputError when the start model
// is not of `kind`; DataInputError for a fixed parameter the profile does not have (naming --fix,
// with "did you mean"), a fixed value that makes no valid profile, fewer pulses (plus log points)
// than unknowns, options out of range, or a pulse whose channel no path reaches under the start
// model (naming the pulser, the channel and the line); NumericalError when the fit does not
// converge or the data cannot determine a parameter; Cancelled when asked to stop.
CalibrationResult calibrate_profile(const FirnModel& start_model, const Station& station, const PulserTimes& times,
                                    CalibrationKind kind, const CalibrationOptions& options = {});

// The 1σ of the fitted profile's n at depth_m (m, positive down), propagated linearly from the
// covariance: σ² = gᵀ C g with g = ∂n/∂θ of the free parameters by central differences (the
// steps of CalibrationOptions::relative_step). 0 at depths no free parameter reaches.
double fitted_index_sigma(const CalibrationResult& result, double depth_m, double relative_step = 1e-4);

}  // namespace firnray
