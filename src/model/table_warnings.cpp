#include "model/table_warnings.hpp"

#include <algorithm>
#include <cmath>
#include <string>

#include <fmt/format.h>

#include "core/text.hpp"
#include "model/model_limits.hpp"

namespace firnray {

namespace {

// Keeps at most model_limits::most_warnings_per_kind warnings of one kind and counts the rest.
class WarningsOfOneKind {
public:
    WarningsOfOneKind(std::vector<ModelWarning>& out, std::string kind) : out_(out), kind_(std::move(kind)) {}
    ~WarningsOfOneKind() {
        if (skipped_ > 0)
            out_.push_back({fmt::format("and {} more point{} {} in this table (only the first {} are shown)",
                                        skipped_, skipped_ == 1 ? "" : "s", kind_,
                                        model_limits::most_warnings_per_kind),
                            last_});
    }
    WarningsOfOneKind(const WarningsOfOneKind&) = delete;
    WarningsOfOneKind& operator=(const WarningsOfOneKind&) = delete;

    void add(const InputLocation& where, std::string message) {
        if (shown_ < model_limits::most_warnings_per_kind) {
            out_.push_back({std::move(message), where});
            ++shown_;
        } else {
            ++skipped_;
            last_ = where;
        }
    }

private:
    std::vector<ModelWarning>& out_;
    std::string kind_;
    int shown_ = 0, skipped_ = 0;
    InputLocation last_;
};

std::string depth_text(double depth_m) { return number_for_message(depth_m) + " m"; }

// n falling by more than unusual_index_fall within unusual_fall_span_m: a duct-making layer.
void warn_index_falls(const PointTable& table, const std::vector<double>& n, std::vector<ModelWarning>& out) {
    WarningsOfOneKind warnings(out, "where n falls fast with depth");
    const auto& points = table.points;
    bool warned_this_fall = false;  // one warning per run of points falling with depth
    for (std::size_t j = 1; j < points.size(); ++j) {
        if (!(n[j] < n[j - 1])) warned_this_fall = false;
        if (warned_this_fall) continue;
        std::size_t highest = j;
        for (std::size_t i = j; i-- > 0 && points[j].depth - points[i].depth <= model_limits::unusual_fall_span_m;)
            if (n[i] > n[highest]) highest = i;
        const double fall = n[highest] - n[j];
        if (highest == j || !(fall > model_limits::unusual_index_fall)) continue;
        warnings.add(points[j].value_at,
                     fmt::format("n falls by {:.3f} with depth, from {:.4f} at {} to {:.4f} at {} (more than {} within "
                                 "{} m): such a layer makes a duct; if it is not real, give smoothing_m",
                                 fall, n[highest], depth_text(points[highest].depth), n[j],
                                 depth_text(points[j].depth), model_limits::unusual_index_fall,
                                 model_limits::unusual_fall_span_m));
        warned_this_fall = true;
    }
}

// A step between neighbouring points larger than a typical ice lens makes.
void warn_large_steps(const PointTable& table, const std::vector<double>& n, std::optional<double> kg_m3_per_unit,
                      std::vector<ModelWarning>& out) {
    WarningsOfOneKind warnings(out, "with a large step from the point before");
    const auto& points = table.points;
    for (std::size_t i = 1; i < points.size(); ++i) {
        const std::string span = fmt::format("between {} and {}", depth_text(points[i - 1].depth),
                                             depth_text(points[i].depth));
        if (kg_m3_per_unit) {
            const double step = (points[i].value - points[i - 1].value) * *kg_m3_per_unit;
            if (std::abs(step) > model_limits::unusual_density_step_kg_m3)
                warnings.add(points[i].value_at,
                             fmt::format("the density {} by {} kg/m3 {}: larger than {} kg/m3, a step that even an "
                                         "ice lens rarely makes; check the value and its unit",
                                         step > 0.0 ? "rises" : "falls", number_for_message(std::abs(step)), span,
                                         model_limits::unusual_density_step_kg_m3));
        } else {
            const double step = n[i] - n[i - 1];
            if (std::abs(step) > model_limits::unusual_index_step)
                warnings.add(points[i].value_at,
                             fmt::format("n {} by {:.3f} {}: larger than {:.3f}, a step that even an ice lens "
                                         "rarely makes; check the value",
                                         step > 0.0 ? "rises" : "falls", std::abs(step), span,
                                         model_limits::unusual_index_step));
        }
    }
}

// A gap between points far finer or far coarser than the table's median gap.
void warn_uneven_spacing(const PointTable& table, std::vector<ModelWarning>& out) {
    const auto& points = table.points;
    if (points.size() < 4) return;  // fewer than three gaps have no "rest" to compare with
    std::vector<double> gaps;
    for (std::size_t i = 1; i < points.size(); ++i) gaps.push_back(points[i].depth - points[i - 1].depth);
    std::vector<double> sorted = gaps;
    std::nth_element(sorted.begin(), sorted.begin() + static_cast<std::ptrdiff_t>(sorted.size() / 2), sorted.end());
    const double median = sorted[sorted.size() / 2];
    WarningsOfOneKind warnings(out, "with a spacing far from the median");
    for (std::size_t i = 0; i < gaps.size(); ++i) {
        const double ratio = gaps[i] / median;
        if (ratio <= model_limits::unusual_spacing_ratio && ratio >= 1.0 / model_limits::unusual_spacing_ratio)
            continue;
        warnings.add(points[i + 1].depth_at,
                     fmt::format("the point at {} is {} from the one before, {} times {} than the table's median "
                                 "spacing ({}): {}",
                                 depth_text(points[i + 1].depth), depth_text(gaps[i]),
                                 number_for_message(ratio > 1.0 ? ratio : 1.0 / ratio),
                                 ratio > 1.0 ? "coarser" : "finer", depth_text(median),
                                 ratio > 1.0 ? "the interpolation bridges a gap in the log"
                                             : "a detail much finer than the rest of the log"));
    }
}

}  // namespace

std::vector<ModelWarning> unusual_table_features(const PointTable& table, const std::vector<double>& n,
                                                 std::optional<double> density_kg_m3_per_unit) {
    std::vector<ModelWarning> out;
    warn_index_falls(table, n, out);
    warn_large_steps(table, n, density_kg_m3_per_unit, out);
    warn_uneven_spacing(table, out);
    // In file order (a table given bottom up is stored top down, so its lines run backwards).
    std::stable_sort(out.begin(), out.end(),
                     [](const ModelWarning& a, const ModelWarning& b) { return a.where.line < b.where.line; });
    return out;
}

}  // namespace firnray
