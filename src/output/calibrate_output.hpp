// Writers for a calibration of the index profile on pulser times (docs/calibrate.md): the report
// as text and JSON, the calibrated model file with its [uncertainty] covariance, and the SVG of
// the residuals against depth and distance and of the fitted profile with its 1σ band.
#pragma once

#include <ostream>
#include <string>

#include "calibrate/calibration.hpp"
#include "station/station.hpp"

namespace firnray {

// Parameters (start, fitted, 1σ or "fixed"), χ² and ndof, the covariance, the pulser offsets and
// one line per pulse with its matched path.
void write_calibration_text(std::ostream& out, const CalibrationResult& result, const Station& station);
// {"parameters": {NAME: {"value", "sigma", "start"[, "fixed": true]}}, "parameter_names",
// "covariance", "chi2", "ndof", "residuals": [one per pulse], "pulsers", …} (docs/calibrate.md).
void write_calibration_json(std::ostream& out, const CalibrationResult& result, const Station& station);
// Three panels: residual against pulser depth, residual against horizontal distance, and n
// against depth (start profile, fitted profile, fitted ± 1σ, and the log when there is one).
void write_calibration_svg(std::ostream& out, const CalibrationResult& result);
// The fitted model as a model file (load_model_file reads it back with the covariance). An empty
// name becomes "NAME OF THE START MODEL, calibrated on TIMES"; origin is where it is written.
void write_calibrated_model_toml(std::ostream& out, const CalibrationResult& result, const std::string& name,
                                 const std::string& origin);

}  // namespace firnray
