#include "model/profile_samples.hpp"

#include <cmath>

#include <fmt/format.h>

#include "core/errors.hpp"

namespace firnray {

std::vector<ProfileSample> sample_profile(const IndexProfile& profile, double from_depth_m, double to_depth_m,
                                          double step_m, std::size_t max_samples) {
    if (!std::isfinite(from_depth_m) || from_depth_m < 0.0)
        throw DataInputError(fmt::format("the first depth {} m must be finite and >= 0", from_depth_m));
    if (!std::isfinite(to_depth_m) || to_depth_m < from_depth_m)
        throw DataInputError(fmt::format("the last depth {} m must be finite and not above the first ({} m)",
                                         to_depth_m, from_depth_m));
    if (!std::isfinite(step_m) || step_m <= 0.0)
        throw DataInputError(fmt::format("the depth step {} m must be positive", step_m));
    const double intervals = (to_depth_m - from_depth_m) / step_m;
    if (intervals + 1.0 > static_cast<double>(max_samples))
        throw DataInputError(fmt::format("{:.0f} samples are more than the {} allowed; use a larger step",
                                         std::floor(intervals) + 1.0, max_samples));
    const auto count = static_cast<std::size_t>(std::floor(intervals + 1e-6)) + 1;
    std::vector<ProfileSample> samples(count);
    for (std::size_t i = 0; i < count; ++i) {
        ProfileSample& s = samples[i];
        s.depth_m = std::min(from_depth_m + static_cast<double>(i) * step_m, to_depth_m);
        s.z_m = s.depth_m == 0.0 ? 0.0 : -s.depth_m;
        profile.index_and_gradient(s.z_m, s.n, s.dn_dz_per_m);
    }
    return samples;
}

}  // namespace firnray
