// The bounds a model file's numbers must lie in. They are generous on purpose (every real polar
// site lies well inside them) and exist so that a model that loads gives finite answers
// everywhere; docs/model-files.md §Bounds gives the reason for each.
#pragma once

#include <limits>

#include "io/toml_reader.hpp"

namespace firnray::model_limits {

// Refractive index of the ice, the air or a table point: vacuum is 1; solid ice is about 1.78 and
// no snow, firn or ice reaches 2 (from memory).
inline constexpr NumberRange index{1.0, 2.0, "", "an index",
                                   "below 1 a medium would be faster than vacuum; no firn or ice reaches 2"};

// e-folding depths of exponential profiles and layers: a centimetre to ten kilometres. Smaller
// scales would make dn/dz absurdly large; larger ones make the profile flat over any ice sheet.
inline constexpr NumberRange scale_depth{0.01, 10000.0, "m", "a scale depth",
                                         "firn densifies over metres to a hundred metres"};

// Width of the smooth joins between layers.
inline constexpr NumberRange transition{0.01, 1000.0, "m", "a transition width",
                                        "narrower joins make dn/dz change too fast to integrate"};

// Any depth (table points, layer bottoms, the bottom): the thickest ice on Earth is under 5 km.
inline constexpr double deepest_depth_m = 10000.0;
inline constexpr NumberRange depth{0.0, deepest_depth_m, "m", "a depth",
                                   "the surface is depth 0 and the thickest ice on Earth is under 5 km"};
inline constexpr NumberRange height{-deepest_depth_m, 0.0, "m", "a z in the ice",
                                    "the surface is z = 0 and the thickest ice on Earth is under 5 km"};

// Table points closer than this are not resolved by any log, and would make the cubic's slopes huge.
inline constexpr double smallest_point_spacing_m = 0.001;

// Radio attenuation lengths: a metre (far lossier than any ice) to 100 km (far clearer than any).
inline constexpr NumberRange attenuation_length{1.0, 100000.0, "m", "an attenuation length",
                                                "common practice puts cold polar ice near 1 km"};

// Fraction of power reflected by the bottom.
inline constexpr NumberRange power_reflectivity{0.0, 1.0, "", "power_reflectivity",
                                                "it is |r|^2, a fraction of power"};

}  // namespace firnray::model_limits
