#include "station/arrival_table.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <complex>
#include <limits>

#include <fmt/format.h>

#include "core/constants.hpp"
#include "core/errors.hpp"
#include "core/parallel.hpp"
#include "paths/amplitude.hpp"
#include "trace/bracketed_root.hpp"
#include "trace/fresnel.hpp"

namespace firnray {

namespace {
constexpr double nan = std::numeric_limits<double>::quiet_NaN();

}  // namespace

InterpolatedArrival interpolate_arrival(const TableSample& a, const TableSample& b, double distance_m) {
    const double dx = b.distance_m - a.distance_m;
    const double w = dx != 0.0 ? (distance_m - a.distance_m) / dx : 0.0;
    const double xi0 = a.ray_parameter, xi1 = b.ray_parameter;
    const double h = dx, s = w, s2 = s * s, s3 = s2 * s;
    InterpolatedArrival out;
    out.time_s = (2 * s3 - 3 * s2 + 1) * a.time_s + (s3 - 2 * s2 + s) * h * xi0 / speed_of_light +
                 (-2 * s3 + 3 * s2) * b.time_s + (s3 - s2) * h * xi1 / speed_of_light;
    out.ray_parameter = xi0 + w * (xi1 - xi0);
    out.attenuation = a.attenuation + w * (b.attenuation - a.attenuation);
    out.length_m = a.length_m + w * (b.length_m - a.length_m);
    const double dxi = xi1 - xi0;
    out.distance_derivative = dxi != 0.0 ? dx / dxi : std::numeric_limits<double>::infinity();
    return out;
}

const char* to_string(ArrivalKind kind) {
    switch (kind) {
        case ArrivalKind::direct: return "direct";
        case ArrivalKind::refracted: return "refracted";
        case ArrivalKind::reflected: return "reflected";
        case ArrivalKind::bottom: return "bottom";
        case ArrivalKind::refracted_below: return "refracted-below";
        case ArrivalKind::ducted: return "ducted";
    }
    return "?";
}

ArrivalTable::ArrivalTable(const RaySolver& solver, double receiver_z, std::vector<double> source_z,
                           const ArrivalTableOptions& options)
    : solver_(&solver), receiver_z_(receiver_z), source_z_(std::move(source_z)) {
    const FirnModel& model = solver.model();
    if (!(receiver_z_ <= 0.0))
        throw DataInputError(fmt::format("the receiver must be in the ice (z <= 0), not at z = {} m", receiver_z_));
    for (double z : source_z_)
        if (!(z <= 0.0)) throw DataInputError(fmt::format("source depths must be in the ice (z <= 0), not z = {} m", z));
    if (options.ray_parameters < 16) throw DataInputError("at least 16 ray parameters are needed for a table");

    levels_ = source_z_;
    levels_.push_back(receiver_z_);
    std::sort(levels_.begin(), levels_.end(), std::greater<>());
    levels_.erase(std::unique(levels_.begin(), levels_.end()), levels_.end());
    auto level_of = [&](double z) {
        return static_cast<std::size_t>(std::lower_bound(levels_.begin(), levels_.end(), z, std::greater<>()) -
                                        levels_.begin());
    };
    receiver_level_ = level_of(receiver_z_);
    n_surface_ = model.index->index(0.0);
    n_air_ = model.n_air;

    double n_high = 0.0;
    for (double z : levels_) n_high = std::max(n_high, model.index->index(z));
    const std::size_t samples = static_cast<std::size_t>(options.ray_parameters);
    ray_parameters_.resize(samples);
    // sin spacing: dense where rays are nearly horizontal, which is where distances change fastest.
    for (std::size_t k = 0; k < samples; ++k)
        ray_parameters_[k] = n_high * std::sin(0.5 * pi * static_cast<double>(k) / static_cast<double>(samples));

    const std::size_t levels = levels_.size();
    distance_.assign(levels * samples, nan);
    time_.assign(levels * samples, nan);
    attenuation_.assign(levels * samples, nan);
    length_.assign(levels * samples, nan);
    parallel_for(samples, options.threads, options.control, [&](std::size_t k) {
        const double xi = ray_parameters_[k];
        double highest_z = 0.0;
        if (xi >= n_surface_) {
            const auto turning = solver_->turning_z(xi, levels_.back());
            if (!turning) return;  // cannot happen for a profile that grows with depth
            highest_z = *turning;
        }
        // The levels this ray reaches: at or below its highest point, where n exceeds ξ.
        std::vector<double> reached;
        std::vector<std::size_t> index;
        for (std::size_t l = 0; l < levels; ++l) {
            const double z = levels_[l];
            if (z > highest_z || model.index->index(z) <= xi) continue;
            reached.push_back(z);
            index.push_back(l);
        }
        std::vector<Segment> legs(reached.size());
        solver_->segments_from(xi, highest_z, reached, legs);
        for (std::size_t i = 0; i < reached.size(); ++i) {
            const std::size_t at = index[i] * samples + k;
            distance_[at] = legs[i].distance_m;
            time_[at] = legs[i].time_s;
            attenuation_[at] = legs[i].attenuation_exponent;
            length_[at] = legs[i].length_m;
        }
    });

    rows_.resize(source_z_.size());
    for (std::size_t j = 0; j < rows_.size(); ++j) rows_[j].source_level = level_of(source_z_[j]);
    parallel_for(rows_.size(), options.threads, options.control, [&](std::size_t j) { build_row(j); });
}

ArrivalTable::Sample ArrivalTable::direct_sample(const Row& row, std::size_t k) const {
    if (k == row.count)
        return {row.end_distance_m, row.end_time_s, row.end_attenuation, row.end_ray_parameter, row.end_length_m};
    const std::size_t n = ray_parameters_.size(), s = row.source_level * n + k, r = receiver_level_ * n + k;
    return {std::abs(distance_[s] - distance_[r]), std::abs(time_[s] - time_[r]),
            std::abs(attenuation_[s] - attenuation_[r]), ray_parameters_[k], std::abs(length_[s] - length_[r])};
}

ArrivalTable::Sample ArrivalTable::rising_sample(const Row& row, std::size_t k) const {
    if (k == row.count)
        return {row.end_distance_m, row.end_time_s, row.end_attenuation, row.end_ray_parameter, row.end_length_m};
    const std::size_t n = ray_parameters_.size(), s = row.source_level * n + k, r = receiver_level_ * n + k;
    return {distance_[s] + distance_[r], time_[s] + time_[r], attenuation_[s] + attenuation_[r], ray_parameters_[k],
            length_[s] + length_[r]};
}

void ArrivalTable::build_row(std::size_t index) {
    Row& row = rows_[index];
    row.index = index;
    const FirnModel& model = solver_->model();
    const double z_source = source_z_[index];
    const double z_shallow = std::max(z_source, receiver_z_), z_deep = std::min(z_source, receiver_z_);
    const double n_shallow = model.index->index(z_shallow);
    row.count = static_cast<std::size_t>(std::lower_bound(ray_parameters_.begin(), ray_parameters_.end(), n_shallow) - ray_parameters_.begin());
    // The end point: the ray is horizontal at the shallower end, where both families meet.
    // Where the index does not change at that end (a homogeneous layer) the horizontal ray never
    // comes back: the families reach every distance, and lookups past the last sample are solved
    // exactly on the solver (exact_sample).
    if (model.index->gradient(z_shallow) == 0.0) {
        row.end_distance_m = std::numeric_limits<double>::infinity();
        row.end_time_s = row.end_distance_m;
        row.end_attenuation = 0.0;
        row.end_length_m = row.end_distance_m;
    } else if (z_shallow == z_deep) {
        row.end_distance_m = 0.0;
        row.end_time_s = row.end_distance_m;
        row.end_attenuation = 0.0;
        row.end_length_m = 0.0;
    } else {
        const Segment end = solver_->segment(n_shallow, z_shallow, z_deep);
        row.end_distance_m = end.distance_m;
        row.end_time_s = end.time_s;
        row.end_attenuation = end.attenuation_exponent;
        row.end_length_m = end.length_m;
    }
    row.end_ray_parameter = n_shallow;

    // Monotone runs of the rising family (the direct family is monotone for profiles that grow
    // with depth, but tabulated data may not be; it is split the same way at lookup time).
    row.rising_runs.clear();
    std::size_t first = 0;
    for (std::size_t k = 1; k <= row.count; ++k) {
        const double x0 = rising_sample(row, k - 1).distance_m, x1 = rising_sample(row, k).distance_m;
        const bool increasing = x1 >= x0;
        if (k == first + 1) {
            row.rising_runs.push_back({first, k, increasing});
        } else if (increasing == row.rising_runs.back().increasing) {
            row.rising_runs.back().last = k;
        } else {
            first = k - 1;
            row.rising_runs.push_back({first, k, increasing});
        }
    }

    double reach = row.end_distance_m;
    std::size_t best = row.count;
    for (std::size_t k = 0; k <= row.count; ++k) {
        const double x = std::max(direct_sample(row, k).distance_m, rising_sample(row, k).distance_m);
        if (x > reach) {
            reach = x;
            best = k;
        }
    }
    if (best > 0 && best < row.count) {
        // Interior maximum of the rising family: refine it on the solver itself, and remember
        // it, since the samples around it can miss the last metres of reach (see arrivals()).
        auto minus_rising = [&](double xi) { return -exact_at(row, ArrivalKind::refracted, xi).distance_m; };
        const double lo = ray_parameters_[best - 1], hi = std::min(ray_parameters_[best + 1], n_shallow);
        const auto [xi_best, minus_x] = brent_minimum("the largest reach of a ray family", minus_rising, lo, hi, 52);
        if (-minus_x > reach) {
            row.has_peak = true;
            row.peak_ray_parameter = xi_best;
            row.peak_low = lo;
            row.peak_high = hi;
            row.sampled_peak_m = reach;
            reach = -minus_x;
        }
    }
    row.max_reach_m = reach;
}

ArrivalTable::Sample ArrivalTable::exact_at(const Row& row, ArrivalKind family, double xi) const {
    const double z_source = source_z_[row.index];
    if (family == ArrivalKind::direct) {
        const Segment leg = solver_->segment(xi, z_source, receiver_z_);
        return Sample{leg.distance_m, leg.time_s, leg.attenuation_exponent, xi, leg.length_m};
    }
    const double z_deep = std::min(z_source, receiver_z_);
    double highest_z = 0.0;
    if (xi >= n_surface_) highest_z = solver_->turning_z(xi, z_deep).value_or(0.0);
    // Both legs from one ray down through the two ends (a single integration on solvers that
    // override segments_from). The shallower end may sit a rounding error above the turning point.
    const std::array<double, 2> ends{std::min(std::max(z_source, receiver_z_), highest_z), z_deep};
    std::array<Segment, 2> legs;
    solver_->segments_from(xi, highest_z, ends, legs);
    return Sample{legs[0].distance_m + legs[1].distance_m, legs[0].time_s + legs[1].time_s,
                  legs[0].attenuation_exponent + legs[1].attenuation_exponent, xi, legs[0].length_m + legs[1].length_m};
}

ArrivalTable::Sample ArrivalTable::exact_sample(const Row& row, ArrivalKind family, double xi_low,
                                                double distance_m) const {
    // Bisection in the angle variable ξ = n sin φ: x grows like tan φ, so this converges evenly.
    const double n_end = row.end_ray_parameter;
    double lo = std::asin(std::min(1.0, xi_low / n_end)), hi = 0.5 * pi;
    for (int i = 0; i < 200 && hi - lo > 1e-15; ++i) {
        const double mid = 0.5 * (lo + hi);
        if (exact_at(row, family, n_end * std::sin(mid)).distance_m < distance_m) lo = mid;
        else hi = mid;
    }
    return exact_at(row, family, n_end * std::sin(0.5 * (lo + hi)));
}

void ArrivalTable::add_exact_peak_arrivals(const Row& row, double distance_m, std::vector<MapArrival>& out) const {
    // Both roots of x_S(ξ) = R around the refined maximum, by bisection on the solver.
    for (const bool rising_side : {true, false}) {
        double lo = rising_side ? row.peak_low : row.peak_ray_parameter;
        double hi = rising_side ? row.peak_ray_parameter : row.peak_high;
        for (int i = 0; i < 100 && hi - lo > 1e-15; ++i) {
            const double mid = 0.5 * (lo + hi);
            const bool below = exact_at(row, ArrivalKind::refracted, mid).distance_m < distance_m;
            if (below == rising_side) lo = mid;
            else hi = mid;
        }
        const double xi = 0.5 * (lo + hi);
        const Sample a = exact_at(row, ArrivalKind::refracted, xi);
        const double step = (rising_side ? -1.0 : 1.0) * 1e-9;
        const Sample b = exact_at(row, ArrivalKind::refracted, xi + step);
        add_arrival(row, ArrivalKind::refracted, a, b, a.distance_m, out);
    }
}

void ArrivalTable::add_arrival(const Row& row, ArrivalKind family, const Sample& a, const Sample& b, double distance_m,
                               std::vector<MapArrival>& out) const {
    const FirnModel& model = solver_->model();
    const InterpolatedArrival at = interpolate_arrival({a.distance_m, a.time_s, a.ray_parameter, a.attenuation, a.length_m},
                                                       {b.distance_m, b.time_s, b.ray_parameter, b.attenuation, b.length_m},
                                                       distance_m);
    const double xi = at.ray_parameter, attenuation = at.attenuation, length = at.length_m;

    MapArrival arrival;
    arrival.time_s = at.time_s;
    arrival.ray_parameter = xi;
    std::complex<double> interface_s{1.0, 0.0}, interface_p{1.0, 0.0};
    if (family == ArrivalKind::direct) {
        arrival.kind = ArrivalKind::direct;
    } else if (xi < n_surface_) {
        arrival.kind = ArrivalKind::reflected;
        const auto f = fresnel(n_surface_, n_air_, cos_from_ray_parameter(n_surface_, xi));
        interface_s = f.r_s;
        interface_p = f.r_p;
    } else {
        arrival.kind = ArrivalKind::refracted;
    }
    // The tube of paths/amplitude.hpp, with ∂R/∂ξ from the two samples that bracket the arrival.
    RayTube tube;
    tube.n_source = model.index->index(source_z_[row.index]);
    tube.n_receiver = model.index->index(receiver_z_);
    tube.horizontal_distance_m = distance_m;
    tube.ray_parameter = xi;
    tube.distance_derivative = at.distance_derivative;
    tube.derivative_cosines = std::abs(tube.distance_derivative) * cos_from_ray_parameter(tube.n_source, xi) *
                              cos_from_ray_parameter(tube.n_receiver, xi);
    tube.length_m = length;
    const PathAmplitude amplitude = path_amplitude(interface_s, interface_p, 1.0, attenuation, tube);
    arrival.caustic = amplitude.caustic;
    arrival.amplitude_per_m = mean_field_magnitude(amplitude);
    out.push_back(arrival);
}

void ArrivalTable::arrivals(std::size_t index, double distance_m, std::vector<MapArrival>& out) const {
    out.clear();
    const Row& row = rows_[index];
    if (distance_m > row.max_reach_m || row.count == 0) return;
    auto search = [&](ArrivalKind family, auto sample, std::size_t first, std::size_t last, bool increasing) {
        // Bracket R in [first, last] by bisection on the monotone run.
        const double x_first = sample(first).distance_m, x_last = sample(last).distance_m;
        const double lo_x = std::min(x_first, x_last), hi_x = std::max(x_first, x_last);
        if (distance_m < lo_x || distance_m >= hi_x) return;
        std::size_t lo = first, hi = last;
        while (hi - lo > 1) {
            const std::size_t mid = (lo + hi) / 2;
            const double x = sample(mid).distance_m;
            if ((x <= distance_m) == increasing) lo = mid;
            else hi = mid;
        }
        const Sample a = sample(lo), b = sample(hi);
        if (std::isfinite(b.distance_m)) {
            add_arrival(row, family, a, b, distance_m, out);
        } else {
            // Past the last finite sample of a family that reaches infinity: solve exactly.
            const Sample exact = exact_sample(row, family, a.ray_parameter, distance_m);
            add_arrival(row, family, a, exact, distance_m, out);
        }
    };
    auto direct = [&](std::size_t k) { return direct_sample(row, k); };
    auto rising = [&](std::size_t k) { return rising_sample(row, k); };
    // At equal depths no path is monotone in z: every path belongs to the rising family.
    if (source_z_[index] != receiver_z_) search(ArrivalKind::direct, direct, 0, row.count, true);
    for (const MonotoneRun& run : row.rising_runs) search(ArrivalKind::refracted, rising, run.first, run.last, run.increasing);
    if (row.has_peak && distance_m > row.sampled_peak_m) add_exact_peak_arrivals(row, distance_m, out);
    std::sort(out.begin(), out.end(), [](const MapArrival& a, const MapArrival& b) { return a.time_s < b.time_s; });
}

}  // namespace firnray
