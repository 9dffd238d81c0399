// A stack of exponential index pieces from the surface down: firn densifies in stages (the
// two-stage picture of Herron & Langway 1980, J. Glaciol. 25(93)), each stage with its own
// asymptote and e-folding depth. n is continuous at every boundary, and so is dn/dz (see below).
#pragma once

#include <limits>
#include <string>
#include <vector>

#include "model/index_profile.hpp"

namespace firnray {

// One stage of densification. In depth d = -z, between the layer's top depth d_top and its bottom:
//   n(d) = n_deep - (n_deep - n_top) * exp(-(d - d_top) / scale_depth_m)
// where n_top is n at the bottom of the layer above (n_surface for the first layer).
struct ExponentialLayer {
    double bottom_depth_m = std::numeric_limits<double>::infinity();  // the deepest layer: infinity
    double n_deep = 1.78;                                               // asymptote of this stage
    double scale_depth_m = 40.0;                                        // e-folding depth (m)
};

// The layer formulas meet with equal n but, in general, different slopes. Because the ray
// equations need a continuous dn/dz, a thin transition zone of width transition_m is centred on
// each boundary, in which dn/dz passes smoothly from one layer's slope to the next (a quintic
// smoothstep blend of the two slopes plus a small correction that makes n leave the zone exactly on
// the lower layer's formula). Outside the zones the layer formulas hold exactly; inside, n is C².
class LayeredProfile final : public IndexProfile {
public:
    static constexpr double default_transition_m = 2.0;

    // Throws ModelInputError (key names as in model files, relative to [index], with 0-based layer
    // indexes: "n_surface", "layer[1].n_deep", "layer[0].bottom_depth_m", "transition_m") when a
    // value is not finite, an index is below 1, a scale depth is not positive, the bottoms do not
    // increase, a layer's n_deep lies below the n at its top (n would fall with depth), a transition
    // zone does not fit inside its layers, or the smoothed profile would decrease anywhere.
    LayeredProfile(double n_surface, std::vector<ExponentialLayer> layers,
                   double transition_m = default_transition_m);

    double index(double z) const override;
    double gradient(double z) const override;
    void index_and_gradient(double z, double& n, double& dn_dz) const override;
    std::string kind() const override { return "layered"; }
    std::string describe() const override;

    double n_surface() const { return n_surface_; }
    double transition_m() const { return 2.0 * half_width_; }
    const std::vector<ExponentialLayer>& layers() const { return layers_; }
    // n at the top of layer i by the layer formulas (n_surface for i = 0).
    double layer_top_index(std::size_t i) const { return top_index_[i]; }

private:
    struct Zone {
        double start_depth = 0.0;  // boundary - half width
        double correction = 0.0;   // δ: the excess of the blended integral over the jump in n
    };
    // Nominal formula of layer i, continued beyond its own depth range (d in metres, positive down).
    double layer_index(std::size_t i, double depth) const;
    double layer_slope(std::size_t i, double depth) const;  // dn/d(depth)
    // n and dn/d(depth) at a depth, with the transitions applied.
    void evaluate(double depth, double& n, double& dn_ddepth) const;
    double blended_integral(std::size_t zone, double from, double to) const;

    double n_surface_;
    std::vector<ExponentialLayer> layers_;
    std::vector<double> top_depth_, top_index_;
    std::vector<Zone> zones_;  // one per boundary (layers - 1)
    double half_width_;
};

}  // namespace firnray
