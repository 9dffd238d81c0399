#include "model/layered_profile.hpp"

#include <array>
#include <cmath>

#include <fmt/format.h>

#include "core/errors.hpp"

namespace firnray {

namespace {

// Quintic smoothstep: 0 -> 1 on [0, 1] with zero first and second derivatives at both ends.
double smoothstep(double t) { return t * t * t * (10.0 + t * (-15.0 + 6.0 * t)); }
double smoothstep_slope(double t) { return 30.0 * t * t * (1.0 - t) * (1.0 - t); }

// 8-point Gauss-Legendre nodes and weights on [-1, 1] (Abramowitz & Stegun, Table 25.4).
constexpr std::array<double, 8> gauss_nodes = {-0.9602898564975363, -0.7966664774136267, -0.5255324099163290,
                                               -0.1834346424956498, 0.1834346424956498,  0.5255324099163290,
                                               0.7966664774136267,  0.9602898564975363};
constexpr std::array<double, 8> gauss_weights = {0.1012285362903763, 0.2223810344533745, 0.3137066458778873,
                                                 0.3626837833783620, 0.3626837833783620, 0.3137066458778873,
                                                 0.2223810344533745, 0.1012285362903763};

ModelInputError layer_error(std::size_t i, const char* field, const std::string& what) {
    return ModelInputError(what, {"", 0, fmt::format("layer[{}].{}", i, field)});
}

}  // namespace

LayeredProfile::LayeredProfile(double n_surface, std::vector<ExponentialLayer> layers, double transition_m)
    : n_surface_(n_surface), layers_(std::move(layers)), half_width_(transition_m / 2.0) {
    if (!std::isfinite(n_surface))
        throw ModelInputError("n_surface must be a finite number", {"", 0, "n_surface"});
    if (n_surface < 1.0)
        throw ModelInputError(fmt::format("n_surface = {} is below 1 (no medium is faster than vacuum)", n_surface),
                              {"", 0, "n_surface"});
    if (layers_.empty()) throw ModelInputError("a layered profile needs at least one layer", {"", 0, "layer"});
    if (!std::isfinite(transition_m) || transition_m <= 0.0)
        throw ModelInputError(fmt::format("transition_m must be a positive finite width in metres (got {})", transition_m),
                              {"", 0, "transition_m"});

    const std::size_t count = layers_.size();
    top_depth_.resize(count);
    top_index_.resize(count);
    double top = 0.0, n_top = n_surface;
    for (std::size_t i = 0; i < count; ++i) {
        const ExponentialLayer& layer = layers_[i];
        if (!std::isfinite(layer.n_deep)) throw layer_error(i, "n_deep", "n_deep must be a finite number");
        if (layer.n_deep < 1.0)
            throw layer_error(i, "n_deep", fmt::format("n_deep = {} is below 1 (no medium is faster than vacuum)", layer.n_deep));
        if (!std::isfinite(layer.scale_depth_m) || layer.scale_depth_m <= 0.0)
            throw layer_error(i, "scale_depth_m",
                              fmt::format("scale_depth_m must be a positive finite length in metres (got {})",
                                          layer.scale_depth_m));
        const bool deepest = i + 1 == count;
        if (deepest && !std::isinf(layer.bottom_depth_m))
            throw layer_error(i, "bottom_depth_m", "the deepest layer extends to any depth and takes no bottom depth");
        if (!deepest) {
            if (!std::isfinite(layer.bottom_depth_m))
                throw layer_error(i, "bottom_depth_m", "every layer but the deepest needs a finite bottom depth");
            if (!(layer.bottom_depth_m > top))
                throw layer_error(i, "bottom_depth_m",
                                  fmt::format("bottom depth {} m is not below the layer's top at {} m "
                                              "(bottoms must increase from the surface down)",
                                              layer.bottom_depth_m, top));
        }
        if (layer.n_deep < n_top)
            throw layer_error(i, "n_deep",
                              fmt::format("n_deep = {} is below n = {:.6g} at the top of layer {} (counting from 1 "
                                          "at the surface): the index would fall with depth",
                                          layer.n_deep, n_top, i + 1));
        top_depth_[i] = top;
        top_index_[i] = n_top;
        if (!deepest) {
            n_top = layer_index(i, layer.bottom_depth_m);
            top = layer.bottom_depth_m;
        }
    }

    // Each zone must fit inside the two layers it joins without touching the surface or another zone.
    for (std::size_t i = 0; i + 1 < count; ++i) {
        const double thickness = layers_[i].bottom_depth_m - top_depth_[i];
        const double needed = (i == 0 ? 0.0 : half_width_) + half_width_;
        if (needed > thickness)
            throw ModelInputError(
                fmt::format("the transition zones ({} m wide, centred on each boundary) do not fit in layer {} "
                            "({} m thick): use a smaller transition_m",
                            transition_m, i + 1, thickness),
                {"", 0, "transition_m"});
    }

    zones_.resize(count - 1);
    for (std::size_t k = 0; k + 1 < count; ++k) {
        Zone& zone = zones_[k];
        zone.start_depth = layers_[k].bottom_depth_m - half_width_;
        const double end = zone.start_depth + 2.0 * half_width_;
        zone.correction = blended_integral(k, zone.start_depth, end) - (layer_index(k + 1, end) - layer_index(k, end));
    }
    // The correction term can, for extreme layers, make the slope negative inside a zone. Check it.
    for (std::size_t k = 0; k < zones_.size(); ++k) {
        for (int s = 0; s <= 64; ++s) {
            double n, slope;
            evaluate(zones_[k].start_depth + 2.0 * half_width_ * s / 64.0, n, slope);
            if (slope < -1e-12)
                throw ModelInputError(
                    fmt::format("with a transition of {} m the index would fall with depth near the boundary at "
                                "{} m: use a smaller transition_m, or layers whose slopes differ less there",
                                transition_m, layers_[k].bottom_depth_m),
                    {"", 0, "transition_m"});
        }
    }
}

double LayeredProfile::layer_index(std::size_t i, double depth) const {
    const ExponentialLayer& layer = layers_[i];
    return layer.n_deep - (layer.n_deep - top_index_[i]) * std::exp(-(depth - top_depth_[i]) / layer.scale_depth_m);
}

double LayeredProfile::layer_slope(std::size_t i, double depth) const {
    const ExponentialLayer& layer = layers_[i];
    return (layer.n_deep - top_index_[i]) / layer.scale_depth_m *
           std::exp(-(depth - top_depth_[i]) / layer.scale_depth_m);
}

// ∫ S(t) (slope_lower - slope_upper) over [from, to] inside zone k. The integrand is a quintic
// times exponentials that change little across a zone, so 8 Gauss points are exact to rounding.
double LayeredProfile::blended_integral(std::size_t k, double from, double to) const {
    const double mid = 0.5 * (from + to), half = 0.5 * (to - from);
    const double start = zones_[k].start_depth, width = 2.0 * half_width_;
    double sum = 0.0;
    for (std::size_t j = 0; j < gauss_nodes.size(); ++j) {
        const double d = mid + half * gauss_nodes[j];
        sum += gauss_weights[j] * smoothstep((d - start) / width) * (layer_slope(k + 1, d) - layer_slope(k, d));
    }
    return sum * half;
}

void LayeredProfile::evaluate(double depth, double& n, double& dn_ddepth) const {
    if (depth < 0.0) depth = 0.0;
    // Layers are few (a handful), so a linear scan beats anything clever.
    std::size_t layer = 0;
    while (layer + 1 < layers_.size() && depth >= layers_[layer].bottom_depth_m) ++layer;
    // Inside a transition zone? It straddles the bottom of `layer - 1` or of `layer`.
    for (std::size_t k = (layer > 0 ? layer - 1 : 0); k < zones_.size() && k <= layer; ++k) {
        const Zone& zone = zones_[k];
        const double width = 2.0 * half_width_;
        if (depth > zone.start_depth && depth < zone.start_depth + width) {
            const double t = (depth - zone.start_depth) / width;
            const double s = smoothstep(t);
            n = layer_index(k, depth) + blended_integral(k, zone.start_depth, depth) - zone.correction * s;
            dn_ddepth = (1.0 - s) * layer_slope(k, depth) + s * layer_slope(k + 1, depth) -
                        zone.correction * smoothstep_slope(t) / width;
            return;
        }
    }
    n = layer_index(layer, depth);
    dn_ddepth = layer_slope(layer, depth);
}

double LayeredProfile::index(double z) const {
    double n, slope;
    evaluate(-z, n, slope);
    return n;
}

double LayeredProfile::gradient(double z) const {
    double n, slope;
    evaluate(-z, n, slope);
    return -slope;
}

void LayeredProfile::index_and_gradient(double z, double& n, double& dn_dz) const {
    double slope;
    evaluate(-z, n, slope);
    dn_dz = -slope;
}

std::string LayeredProfile::describe() const {
    std::string text = fmt::format("layered: n_surface {}", n_surface_);
    for (std::size_t i = 0; i < layers_.size(); ++i) {
        const ExponentialLayer& layer = layers_[i];
        if (std::isinf(layer.bottom_depth_m))
            text += fmt::format("; below {} m: n_deep {}, scale depth {} m", top_depth_[i], layer.n_deep, layer.scale_depth_m);
        else
            text += fmt::format("; {}-{} m: n_deep {}, scale depth {} m", top_depth_[i], layer.bottom_depth_m,
                                layer.n_deep, layer.scale_depth_m);
    }
    if (layers_.size() > 1) text += fmt::format("; transitions {} m wide", 2.0 * half_width_);
    return text;
}

}  // namespace firnray
