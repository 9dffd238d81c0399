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

// Smoothing length of a table (the σ of its Gaussian average, docs/physics.md §1.4): below a
// centimetre no log resolves anything, and above 100 m nothing of the firn's structure is left
// (fit the exponential model instead).
inline constexpr NumberRange smoothing{0.01, 100.0, "m", "a smoothing length",
                                       "it is the scale below which features of the log are averaged away"};

// What is unusual in a table, though possible, and gets a warning rather than an error (the
// user may well mean it: a lens, a crust, a gap in a log). See docs/model-files.md §Warnings.
// n falling with depth by more than this within unusual_fall_span_m.
inline constexpr double unusual_index_fall = 0.05;
inline constexpr double unusual_fall_span_m = 1.0;
// A step between neighbouring points of a density log larger than this (kg/m³): an ice lens in
// firn is a step of a few hundred kg/m³ (from memory), so this is a lens, but a large one, or a
// unit or transcription slip. For index tables, the same step through Kovacs (0.845 per g/cm³).
inline constexpr double unusual_density_step_kg_m3 = 250.0;
inline constexpr double unusual_index_step = 0.845 * unusual_density_step_kg_m3 / 1000.0;
// A point spacing this many times finer or coarser than the table's median spacing.
inline constexpr double unusual_spacing_ratio = 10.0;
// At most this many warnings of one kind per table; the rest are counted in one more warning.
inline constexpr int most_warnings_per_kind = 5;

// Radio attenuation lengths: a metre (far lossier than any ice) to 100 km (far clearer than any).
inline constexpr NumberRange attenuation_length{1.0, 100000.0, "m", "an attenuation length",
                                                "common practice puts cold polar ice near 1 km"};

// Fraction of power reflected by the bottom.
inline constexpr NumberRange power_reflectivity{0.0, 1.0, "", "power_reflectivity",
                                                "it is |r|^2, a fraction of power"};

}  // namespace firnray::model_limits
