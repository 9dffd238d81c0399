// Gaussian smoothing of a tabulated log (docs/physics.md §1.4, docs/model-files.md): the user
// gives a length σ in metres and features much thinner than σ are averaged away while thicker
// ones are kept, so that a measured log can be taken as it is or with only the features that the
// user trusts.
#pragma once

#include <vector>

namespace firnray {

// The Gaussian average over depth, of standard deviation smoothing_m, of the piecewise-linear
// curve through (depth_m[i], values[i]), evaluated at every depth_m[i]:
//     s(d) = ∫ f(u) exp(−(u − d)² / 2σ²) du / (σ √(2π)).
// Beyond each end the curve is continued by odd reflection about its end point
// (f(d_0 − u) = 2 f(d_0) − f(d_0 + u), the same at the deepest point, repeated as often as σ
// needs), so that the end values are kept exactly and a straight line is left unchanged
// everywhere: the ends are not biased toward the interior. Each piece's integral is evaluated in
// closed form (with erf), so the result is exact for the piecewise-linear curve.
// depth_m strictly increasing with at least two points, values the same size, smoothing_m > 0.
std::vector<double> gaussian_smoothed(const std::vector<double>& depth_m, const std::vector<double>& values,
                                      double smoothing_m);

}  // namespace firnray
