// How much of a pulse adds coherently when the antennas of a beam are summed with delays that do
// not exactly match the arrival times: the peak over time of the sum of the shifted pulses,
// divided by N times the peak of one pulse (docs/beams.md).
#pragma once

#include <cstddef>
#include <span>

namespace firnray {

// A Gaussian pulse given by its full width at half maximum (default 1 ns, common practice for
// the nanosecond radio pulses of particle showers in ice).
struct PulseShape {
    double fwhm_s = 1e-9;
    double sigma_s() const;               // fwhm / (2 √(2 ln 2))
    double value(double time_s) const;    // exp(−t² / (2σ²)), peak 1 at t = 0
};

// The coherent-sum efficiency for residuals r_k (arrival time minus beam delay, s): max over t of
// Σ p(t − r_k) / (N p(0)). A NaN residual is an antenna that adds nothing (the source does not
// reach it, or the beam has no delay for it); N = antenna_count stays the number of antennas.
// The maximum is refined by safeguarded Newton steps from the mean residual or, when the residuals
// spread over more than 2σ (the sum may then have several maxima), from the best of the mean and
// every residual; 0 when no residual is finite. DataInputError for a pulse width that is not > 0.
double coherent_sum_efficiency(std::span<const double> residuals_s, std::size_t antenna_count, const PulseShape& pulse);

}  // namespace firnray
