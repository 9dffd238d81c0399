#include "solver/stratified_intervals.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>

#include <boost/math/tools/roots.hpp>
#include <fmt/format.h>

#include "core/errors.hpp"
#include "core/text.hpp"

namespace firnray {

namespace {

constexpr double infinity = std::numeric_limits<double>::infinity();
constexpr double not_a_number = std::numeric_limits<double>::quiet_NaN();

// Cells of a smooth profile without joins: short near the surface, where firn changes fast, and
// at most 5 m deeper down; the monotone runs are found by sampling dn/dz in each cell.
double generic_cell_length(double z) { return std::clamp(0.01 * std::abs(z), 0.25, 5.0); }

int sign_of(double v) { return (v > 0.0) - (v < 0.0); }

// TOMS748 to a few ulps of z.
template <class F>
double refine_root(F f, double a, double b, double fa, double fb) {
    if (fa == 0.0) return a;
    if (fb == 0.0) return b;
    if (a > b) {
        std::swap(a, b);
        std::swap(fa, fb);
    }
    std::uintmax_t iterations = 200;
    auto tolerance = [](double lo, double hi) {
        return std::abs(hi - lo) <= 4.0 * std::numeric_limits<double>::epsilon() * std::max(std::abs(lo), std::abs(hi));
    };
    const auto bracket = boost::math::tools::toms748_solve(f, a, b, fa, fb, tolerance, iterations);
    const double ga = f(bracket.first), gb = f(bracket.second);
    return std::abs(ga) <= std::abs(gb) ? bracket.first : bracket.second;
}

}  // namespace

RayLevel RayLevel::plain(double ray_parameter) {
    RayLevel level;
    level.ray_parameter = ray_parameter;
    return level;
}

RayLevel RayLevel::anchored_at(const StratifiedProfile& profile, double anchor_z, double offset) {
    RayLevel level;
    level.anchored = true;
    level.anchor_z = anchor_z;
    level.offset = offset;
    level.anchor_cell = profile.cell_at(anchor_z);
    double n, dn, d2n;
    profile.evaluate(level.anchor_cell, anchor_z, n, dn, d2n);
    level.anchor_index = n;
    level.ray_parameter = n - offset;
    return level;
}

const char* to_string(UpperEndKind kind) { return kind == UpperEndKind::surface ? "surface" : "turning"; }

const char* to_string(LowerEndKind kind) {
    switch (kind) {
        case LowerEndKind::turning: return "turning";
        case LowerEndKind::bottom: return "bottom";
        case LowerEndKind::unbounded: return "unbounded";
    }
    return "unbounded";
}

StratifiedProfile::StratifiedProfile(std::shared_ptr<const IndexProfile> profile, std::optional<double> bottom_z,
                                     double analysis_depth_m)
    : profile_(std::move(profile)), bottom_z_(bottom_z) {
    if (!profile_) throw ModelInputError("the index profile is missing", {"", 0, "index"});
    if (bottom_z_ && (!std::isfinite(*bottom_z_) || *bottom_z_ >= 0.0))
        throw ModelInputError(fmt::format("the bottom must lie below the surface (got z = {} m)",
                                          number_for_message(*bottom_z_)),
                              {"", 0, "bottom"});
    if (!std::isfinite(analysis_depth_m) || analysis_depth_m <= 0.0)
        throw ModelInputError(fmt::format("the analysis depth must be a positive number of metres (got {})",
                                          number_for_message(analysis_depth_m)));
    build_cells(analysis_depth_m);
    for (std::size_t i = 0; i < cells_.size(); ++i) {
        cell_bottoms_.push_back(cells_[i].z_bottom);
        double n, dn, d2n;
        evaluate(i, cells_[i].z_bottom, n, dn, d2n);
        cell_bottom_index_.push_back(n);
        if (cells_[i].form != Form::cubic) all_cubic_ = false;
    }
    build_cell_buckets();
    build_runs();
    // The largest n on each cell: at its ends or at a run's end inside it (the only extrema).
    for (std::size_t i = 0; i < cells_.size(); ++i) {
        double n, dn, d2n, largest = cell_bottom_index_[i];
        evaluate(i, cells_[i].z_top, n, dn, d2n);
        largest = std::max(largest, n);
        for (const Run& run : runs_)
            if (run.z_bottom < cells_[i].z_top && run.z_bottom > cells_[i].z_bottom) {
                evaluate(i, run.z_bottom, n, dn, d2n);
                largest = std::max(largest, n);
            }
        if (cells_[i].form == Form::generic) {
            // Its extrema were found by sampling: samples too, and their spread as a margin.
            double smallest = largest;
            for (int k = 1; k < 32; ++k) {
                evaluate(i, cells_[i].z_top + (cells_[i].z_bottom - cells_[i].z_top) * k / 32.0, n, dn, d2n);
                largest = std::max(largest, n);
                smallest = std::min(smallest, n);
            }
            largest += largest - smallest;
        }
        cell_max_index_.push_back(largest);
    }
}

void StratifiedProfile::build_cell_buckets() {
    // Cells of one height h from the surface down (a log sampled at a fixed step), but for the
    // last: cell_at guesses −z/h and steps from there.
    cells_per_metre_ = 0.0;
    if (cells_.size() >= 2) {
        const double h = cells_[0].z_top - cells_[0].z_bottom;
        bool uniform = h > 0.0 && cells_[0].z_top == 0.0;
        for (std::size_t i = 0; uniform && i + 1 < cells_.size(); ++i)
            uniform = std::abs(cells_[i].z_top + static_cast<double>(i) * h) <= 0.25 * h &&
                      std::abs(cells_[i].z_bottom + static_cast<double>(i + 1) * h) <= 0.25 * h;
        if (uniform) cells_per_metre_ = 1.0 / h;
    }
    // About two buckets per cell: a table's cells are of similar heights, so each bucket's range
    // holds one to three cells and cell_at needs no binary search over the whole profile.
    // They end at the top of the last cell (that of the analysis depth below a table, much
    // longer than the others); below it cell_at searches all cells.
    const std::size_t buckets = 2 * cells_.size() + 1;
    bucket_floor_ = cells_.size() >= 2 ? cells_.back().z_top : floor_z_;
    bucket_edges_.resize(buckets + 1);
    for (std::size_t i = 0; i <= buckets; ++i)
        bucket_edges_[i] = bucket_floor_ * (static_cast<double>(i) / static_cast<double>(buckets));
    bucket_edges_[buckets] = bucket_floor_;
    bucket_scale_ = static_cast<double>(buckets) / bucket_floor_;
    bucket_cells_.resize(buckets);
    for (std::size_t i = 0; i < buckets; ++i) {
        const double top = bucket_edges_[i], bottom = bucket_edges_[i + 1];
        // Every cell before `first` has its bottom above the bucket, every cell from `last` on
        // below it, whichever side cell_at takes at a boundary.
        const auto first = std::partition_point(cell_bottoms_.begin(), cell_bottoms_.end(),
                                                [&](double b) { return b > top; });
        const auto last = std::partition_point(cell_bottoms_.begin(), cell_bottoms_.end(),
                                               [&](double b) { return b >= bottom; });
        bucket_cells_[i] = {static_cast<std::uint32_t>(first - cell_bottoms_.begin()),
                            static_cast<std::uint32_t>(last - cell_bottoms_.begin())};
    }
}

SnellCellTables& StratifiedProfile::snell_cell_tables() const {
    if (SnellCellTables* ready = snell_tables_->ready.load(std::memory_order_acquire)) return *ready;
    std::call_once(snell_tables_->made, [this] {
        snell_tables_->tables = make_snell_cell_tables(*this);
        snell_tables_->ready.store(snell_tables_->tables.get(), std::memory_order_release);
    });
    return *snell_tables_->tables;
}

void StratifiedProfile::build_cells(double analysis_depth_m) {
    const auto joins = profile_->joins_z();
    if (bottom_z_) {
        floor_z_ = *bottom_z_;
    } else {
        floor_z_ = -analysis_depth_m;
        if (!joins.empty()) floor_z_ = std::min(floor_z_, joins.back() - 100.0);
    }
    if (const auto* exponential = dynamic_cast<const ExponentialProfile*>(profile_.get())) {
        exponential_ = true;
        exp_a_ = exponential->n_deep();
        exp_b_ = exponential->n_deep() - exponential->n_surface();
        exp_c_ = 1.0 / exponential->scale_depth_m();
    }
    const std::size_t pieces = joins.size() + 1;
    for (std::size_t p = 0; p < pieces; ++p) {
        const double top = std::min(0.0, p == 0 ? 0.0 : joins[p - 1]);
        const double bottom = std::max(floor_z_, p == joins.size() ? floor_z_ : joins[p]);
        if (top > bottom) add_piece_cells(p, top, bottom);
    }
    if (cells_.empty()) throw ModelInputError("the index profile has no depth range to analyse", {"", 0, "index"});
}

void StratifiedProfile::add_piece_cells(std::size_t piece, double z_top, double z_bottom) {
    if (exponential_) {
        // One formula everywhere; cells of half a scale depth keep the cubic model of n behind the
        // panel sizes (snell_integrals.cpp) close to the exponential.
        const double step = std::min(0.5 / exp_c_, 250.0);
        for (double top = z_top; top > z_bottom;) {
            Cell cell;
            cell.z_top = top;
            cell.z_bottom = std::max(z_bottom, top - step);
            cell.form = Form::exponential;
            cell.piece = piece;
            cells_.push_back(cell);
            top = cell.z_bottom;
        }
        return;
    }
    // A table's piece is a cubic: rebuild it from n and n′ at both ends (the Hermite form, as the
    // table builds its pieces, so that it agrees to rounding), and keep it only if it reproduces
    // the profile at three more points.
    double n0, g0, k0, n1, g1, k1;
    profile_->piece_index(piece, z_top, n0, g0, k0);
    profile_->piece_index(piece, z_bottom, n1, g1, k1);
    const double h = z_bottom - z_top;
    Cell cubic;
    cubic.z_top = z_top;
    cubic.z_bottom = z_bottom;
    cubic.form = Form::cubic;
    cubic.piece = piece;
    const double secant = (n1 - n0) / h;
    cubic.c[0] = n0;
    cubic.c[1] = g0;
    cubic.c[2] = (3.0 * secant - 2.0 * g0 - g1) / h;
    cubic.c[3] = (g0 + g1 - 2.0 * secant) / (h * h);
    bool is_cubic = std::isfinite(cubic.c[3]);
    for (double fraction : {1.0, 0.5, 0.25, 0.8}) {
        if (!is_cubic) break;
        const double z = z_top + fraction * h, t = z - z_top;
        double n, g, k;
        profile_->piece_index(piece, z, n, g, k);
        const double nc = cubic.c[0] + t * (cubic.c[1] + t * (cubic.c[2] + t * cubic.c[3]));
        const double gc = cubic.c[1] + t * (2.0 * cubic.c[2] + 3.0 * t * cubic.c[3]);
        const double scale = 1e-13 * (1.0 + std::abs(n));
        if (std::abs(nc - n) > scale || std::abs(gc - g) > scale * (1.0 + 1.0 / std::max(1.0, std::abs(h))))
            is_cubic = false;
    }
    if (is_cubic) {
        cells_.push_back(cubic);
        return;
    }
    for (double top = z_top; top > z_bottom;) {
        Cell cell;
        cell.z_top = top;
        cell.z_bottom = std::max(z_bottom, top - generic_cell_length(top));
        cell.form = Form::generic;
        cell.piece = piece;
        cells_.push_back(cell);
        top = cell.z_bottom;
    }
}

std::size_t StratifiedProfile::cell_at(double z, int toward) const {
    if (z >= 0.0) return 0;
    if (z <= floor_z_) return cells_.size() - 1;
    // First cell whose bottom lies below z (toward < 0), or at or below z (toward > 0): the
    // partition point of the bottoms, found by stepping from −z/h where the cells have one height
    // h, else searched within the range that z's bucket allows.
    if (cells_per_metre_ > 0.0) {
        const std::size_t last = cells_.size() - 1;
        auto before = [&](std::size_t k) { return toward > 0 ? cell_bottoms_[k] > z : cell_bottoms_[k] >= z; };
        std::size_t k = std::min(last, static_cast<std::size_t>(-z * cells_per_metre_));
        if (before(k)) {
            while (k < last && before(k)) ++k;
        } else {
            while (k > 0 && !before(k - 1)) --k;
        }
        return k;
    }
    auto begin = cell_bottoms_.begin(), end = cell_bottoms_.end();
    const std::size_t buckets = bucket_cells_.size();
    const double position = z * bucket_scale_;
    if (position >= 0.0 && position < static_cast<double>(buckets)) {
        auto i = static_cast<std::size_t>(position);
        // The bucket whose stored edges hold z (the product may round across an edge).
        while (i > 0 && z > bucket_edges_[i]) --i;
        while (i + 1 < buckets && z < bucket_edges_[i + 1]) ++i;
        // One to three cells: a linear search, the same answer as the partition point below.
        std::size_t k = bucket_cells_[i].first;
        const std::size_t last = bucket_cells_[i].second;
        if (toward > 0)
            while (k < last && cell_bottoms_[k] > z) ++k;
        else
            while (k < last && cell_bottoms_[k] >= z) ++k;
        return k < cells_.size() ? k : cells_.size() - 1;
    }
    const auto it = toward > 0 ? std::partition_point(begin, end, [&](double bottom) { return bottom > z; })
                               : std::partition_point(begin, end, [&](double bottom) { return bottom >= z; });
    if (it == cell_bottoms_.end()) return cells_.size() - 1;
    return static_cast<std::size_t>(it - cell_bottoms_.begin());
}

void StratifiedProfile::evaluate_formula(std::size_t cell, double z, double& n, double& dn_dz,
                                         double& d2n_dz2) const {
    const Cell& c = cells_[cell];
    n = dn_dz = d2n_dz2 = 0.0;
    switch (c.form) {
        case Form::cubic: return evaluate(cell, z, n, dn_dz, d2n_dz2);  // not reached: inline there
        case Form::exponential: {
            const double e = exp_b_ * std::exp(exp_c_ * z);
            n = exp_a_ - e;
            dn_dz = -exp_c_ * e;
            d2n_dz2 = -exp_c_ * exp_c_ * e;
            return;
        }
        case Form::generic: profile_->piece_index(c.piece, z, n, dn_dz, d2n_dz2); return;
    }
}

double StratifiedProfile::third_derivative(std::size_t cell, double z) const {
    const Cell& c = cells_[cell];
    switch (c.form) {
        case Form::cubic: return 6.0 * c.c[3];
        case Form::exponential: return -exp_c_ * exp_c_ * exp_c_ * exp_b_ * std::exp(exp_c_ * z);
        case Form::generic: return 0.0;
    }
    return 0.0;
}

double StratifiedProfile::index(double z) const {
    double n, g, k;
    evaluate(cell_at(std::min(z, 0.0)), std::min(z, 0.0), n, g, k);
    return n;
}

double StratifiedProfile::formula_divided_difference(std::size_t cell, double z, double z_ref) const {
    const Cell& c = cells_[cell];
    const double delta = z - z_ref;
    switch (c.form) {
        case Form::cubic: return divided_difference(cell, z, z_ref);
        case Form::exponential: {
            const double e = exp_b_ * std::exp(exp_c_ * z_ref);
            return delta == 0.0 ? -exp_c_ * e : -e * std::expm1(exp_c_ * delta) / delta;
        }
        case Form::generic: {
            double n, g, k;
            profile_->piece_index(c.piece, z_ref, n, g, k);
            if (std::abs(delta) < 1e-4) return g + 0.5 * k * delta;  // Taylor: the error k′δ²/6 is below rounding
            double nz, gz, kz;
            profile_->piece_index(c.piece, z, nz, gz, kz);
            return (nz - n) / delta;
        }
    }
    return 0.0;
}

double StratifiedProfile::index_difference(double z, double z_ref) const {
    if (z == z_ref) return 0.0;
    if (exponential_) return -exp_b_ * std::exp(exp_c_ * z_ref) * std::expm1(exp_c_ * (z - z_ref));
    const int toward = z_ref > z ? 1 : -1;
    const std::size_t cz = cell_at(z, toward), cr = cell_at(z_ref, -toward);
    if (cz == cr) return divided_difference(cz, z, z_ref) * (z - z_ref);
    if (cz + 1 == cr || cr + 1 == cz) {
        // Through the shared boundary, each part inside its own cell's formula.
        const double boundary = cz < cr ? cells_[cz].z_bottom : cells_[cz].z_top;
        return divided_difference(cz, z, boundary) * (z - boundary) +
               divided_difference(cr, boundary, z_ref) * (boundary - z_ref);
    }
    return index(z) - index(z_ref);
}

double StratifiedProfile::gap(const RayLevel& level, double z) const {
    if (level.anchored) {
        // Three cells or more from the anchor's: index_difference would take n(z) − n(anchor)
        // (no cell between them is shared), and the level holds n(anchor) already.
        if (!exponential_) {
            const double at = std::min(z, 0.0);
            const std::size_t cell = cell_at(at), anchor = level.anchor_cell;
            if (cell >= anchor + 3 || anchor >= cell + 3) {
                double n, dn, d2n;
                evaluate(cell, at, n, dn, d2n);
                return (n - level.anchor_index) + level.offset;
            }
        }
        return index_difference(z, level.anchor_z) + level.offset;
    }
    if (exponential_) return (exp_a_ - level.ray_parameter) - exp_b_ * std::exp(exp_c_ * std::min(z, 0.0));
    return index(z) - level.ray_parameter;
}

double StratifiedProfile::exponential_gap(const RayLevel& level, double z) const {
    return (exp_a_ - level.ray_parameter) - exp_b_ * std::exp(exp_c_ * std::min(z, 0.0));
}

void StratifiedProfile::build_runs() {
    struct Monotone {
        double z_top, z_bottom;
        int direction;
    };
    std::vector<Monotone> parts;
    auto add_parts = [&](std::size_t cell, std::vector<double> cuts) {
        const Cell& c = cells_[cell];
        cuts.push_back(c.z_top);
        cuts.push_back(c.z_bottom);
        std::sort(cuts.begin(), cuts.end(), std::greater<>());
        cuts.erase(std::unique(cuts.begin(), cuts.end()), cuts.end());
        for (std::size_t i = 0; i + 1 < cuts.size(); ++i) {
            double nt, nb, g, k;
            evaluate(cell, cuts[i], nt, g, k);
            evaluate(cell, cuts[i + 1], nb, g, k);
            parts.push_back({cuts[i], cuts[i + 1], sign_of(nb - nt)});
        }
    };
    for (std::size_t i = 0; i < cells_.size(); ++i) {
        const Cell& c = cells_[i];
        std::vector<double> extrema;
        if (c.form == Form::cubic) {
            // n′(t) = c1 + 2 c2 t + 3 c3 t²: its simple roots inside the cell are the extrema.
            const double qa = 3.0 * c.c[3], qb = 2.0 * c.c[2], qc = c.c[1];
            const double h = c.z_bottom - c.z_top;
            auto consider = [&](double t) {
                if (t < 0.0 && t > h) extrema.push_back(c.z_top + t);
            };
            if (qa == 0.0) {
                if (qb != 0.0) consider(-qc / qb);
            } else {
                const double disc = qb * qb - 4.0 * qa * qc;
                if (disc > 0.0) {
                    const double q = -0.5 * (qb + std::copysign(std::sqrt(disc), qb));
                    consider(q / qa);
                    if (q != 0.0) consider(qc / q);
                }
            }
        } else if (c.form == Form::generic) {
            constexpr int samples = 8;
            double previous_z = c.z_top, previous_g, n, k;
            evaluate(i, previous_z, n, previous_g, k);
            for (int s = 1; s <= samples; ++s) {
                const double z = c.z_top + (c.z_bottom - c.z_top) * s / samples;
                double g;
                evaluate(i, z, n, g, k);
                if (sign_of(g) * sign_of(previous_g) < 0) {
                    auto slope = [&](double zz) {
                        double nn = 0.0, gg = 0.0, kk = 0.0;
                        evaluate(i, zz, nn, gg, kk);
                        return gg;
                    };
                    extrema.push_back(refine_root(slope, previous_z, z, previous_g, g));
                }
                previous_z = z;
                previous_g = g;
            }
        }
        add_parts(i, std::move(extrema));
    }
    for (const Monotone& part : parts)
        if (part.direction == 0) stationary_z_.insert(stationary_z_.end(), {part.z_top, part.z_bottom});
    for (const Monotone& part : parts) {
        double nt, nb, g, k;
        evaluate(cell_at(part.z_top, -1), part.z_top, nt, g, k);
        evaluate(cell_at(part.z_bottom, 1), part.z_bottom, nb, g, k);
        if (!runs_.empty() && (part.direction == 0 || runs_.back().direction == 0 || part.direction == runs_.back().direction)) {
            Run& run = runs_.back();
            if (run.direction == 0) run.direction = part.direction;
            run.z_bottom = part.z_bottom;
            run.index_bottom = nb;
            continue;
        }
        runs_.push_back({part.z_top, part.z_bottom, nt, nb, part.direction});
    }
    for (std::size_t i = 0; i + 1 < runs_.size(); ++i)
        if (runs_[i].direction < 0 && runs_[i + 1].direction > 0) minima_z_.push_back(runs_[i].z_bottom);
    stationary_z_.insert(stationary_z_.end(), minima_z_.begin(), minima_z_.end());
    std::sort(stationary_z_.begin(), stationary_z_.end(), std::greater<>());
    stationary_z_.erase(std::unique(stationary_z_.begin(), stationary_z_.end()), stationary_z_.end());
    // For interval_around: the nearest run above with a lower n at its top, and the nearest run
    // below with a lower n at its bottom (the runs in between cannot hold the end first).
    const std::size_t count = runs_.size();
    upper_lower_top_.assign(count, no_run);
    lower_lower_bottom_.assign(count, no_run);
    for (std::size_t i = 0; i < count; ++i) {
        std::size_t j = i == 0 ? no_run : i - 1;
        while (j != no_run && !(runs_[j].index_top < runs_[i].index_top)) j = upper_lower_top_[j];
        upper_lower_top_[i] = j;
    }
    for (std::size_t i = count; i-- > 0;) {
        std::size_t j = i + 1 < count ? i + 1 : no_run;
        while (j != no_run && !(runs_[j].index_bottom < runs_[i].index_bottom)) j = lower_lower_bottom_[j];
        lower_lower_bottom_[i] = j;
    }
    for (const Run& run : runs_) run_bottoms_.push_back(run.z_bottom);
}

std::pair<double, double> StratifiedProfile::minimum_index(double z_low, double z_high) const {
    double best = index(z_low), best_z = z_low;
    const double n_high = index(z_high);
    if (n_high < best) best = n_high, best_z = z_high;
    for (double z : minima_z_)
        if (z > z_low && z < z_high) {
            const double n = index(z);
            if (n < best) best = n, best_z = z;
        }
    return {best, best_z};
}

double StratifiedProfile::approximate_gap(const RayLevel& level, double n) {
    return level.anchored ? (n - level.anchor_index) + level.offset : n - level.ray_parameter;
}

double StratifiedProfile::rounding_margin(double n) { return 1e-12 * (1.0 + std::abs(n)); }

bool StratifiedProfile::clearly_inside(const RayLevel& level, double n) const {
    // gap() at a run's end differs from this by a few rounding errors of n at most (another
    // cell's formula, or n − n(anchor) taken through a shared boundary).
    return approximate_gap(level, n) > rounding_margin(n);
}

bool StratifiedProfile::clearly_outside(const RayLevel& level, double n) const {
    // Tables only: formula profiles keep gap() at every run end (their anchored levels in deep
    // ice can differ from the stored n by more than this margin).
    if (!all_cubic_) return false;
    return approximate_gap(level, n) < -rounding_margin(n);
}

bool StratifiedProfile::is_local_minimum(double z) const {
    return std::find(minima_z_.begin(), minima_z_.end(), z) != minima_z_.end();
}

double StratifiedProfile::boundary_gap(const RayLevel& level, std::size_t cell) const {
    // n at the boundary from the table of boundary values first: its sign decides unless n − ξ is
    // within a few rounding errors of zero (then the cells' formulas, as gap() takes them).
    const double n = cell_bottom_index_[cell];
    const double approximate = approximate_gap(level, n);
    if (std::abs(approximate) > rounding_margin(n)) return approximate;
    // Within rounding of the root at the boundary itself: left to the solver on gap().
    return not_a_number;
}

double StratifiedProfile::solve_turning(const RayLevel& level, double z_inside, double z_outside,
                                        double gap_inside, bool* cell_only) const {
    if (cell_only) *cell_only = false;
    auto f = [&](double z) { return gap(level, z); };
    // The bracketing solver on gap() over the whole span: for formula cells, and wherever the
    // faster path below meets rounding (it returns z_inside itself where gap() is 0 there).
    auto bracketing = [&] {
        const double g_inside = std::isnan(gap_inside) ? f(z_inside) : gap_inside;
        if (g_inside == 0.0) return z_inside;
        return refine_root(f, z_inside, z_outside, g_inside, f(z_outside));
    };
    // Formula cells (exponential, layered, generic) keep the bracketing solver on gap(): in deep
    // ice n − ξ there is below the rounding of n over hundreds of metres, and its first secant step
    // from the anchor is what places the turning point right (a table's cells are cubics whose
    // n changes resolvably in every cell that holds a root).
    if (!all_cubic_) return bracketing();
    if (gap_inside == 0.0) return z_inside;
    // n is monotone from z_inside (n > ξ) to z_outside (n <= ξ), so n − ξ changes sign once: first
    // the cell holding the root, by bisection over the cell boundaries between the two points
    // (each decided from the stored n of the boundary), then the root inside that cell's cubic.
    const bool downward = z_outside < z_inside;
    std::size_t inner = cell_at(z_inside, downward ? -1 : 1), outer = cell_at(z_outside, downward ? 1 : -1);
    double inside = z_inside, outside = z_outside;
    while (inner != outer) {
        // Boundaries between the cells inner … outer: below cell k for k in [low, high).
        const std::size_t low = std::min(inner, outer), high = std::max(inner, outer);
        const std::size_t k = low + (high - low) / 2;
        const double z = cells_[k].z_bottom, g = boundary_gap(level, k);
        if (std::isnan(g)) return bracketing();
        const bool root_below = (g > 0.0) == downward;  // the root lies deeper than this boundary
        if (g > 0.0) inside = z;
        else outside = z;
        if (root_below) (downward ? inner : outer) = k + 1;
        else (downward ? outer : inner) = k;
    }
    const std::size_t cell = inner;
    // Only the cell: a depth strictly inside it, between the bracket's ends (the root lies in
    // (inside, outside]).
    if (cell_only) {
        const double middle = 0.5 * (inside + outside);
        if (middle > cells_[cell].z_bottom && middle < cells_[cell].z_top) {
            *cell_only = true;
            return middle;
        }
    }
    // Steps from the quadratic model of n − ξ about the current point (the root of
    // g + g′δ + g″δ²/2 nearest to it; Newton where that has none), kept in the bracket
    // [inside, outside] and replaced by bisection where they leave it or stall (as in rtsafe,
    // Numerical Recipes; common practice). The quadratic converges fast next to a local extremum
    // of n too (a turning point close to a double root), where Newton only halves the distance.
    auto value = [&](double z, double& slope, double& curvature) {
        double n;
        evaluate(cell, z, n, slope, curvature);
        return gap_in_cell(level, cell, z, n);
    };
    double slope = 0.0, curvature = 0.0;
    const double g_in = value(inside, slope, curvature), g_out = value(outside, slope, curvature);
    if (g_out == 0.0) return outside;
    // The cell's cubic disagrees in sign with gap() at an end (a boundary within rounding of the
    // root, or z_inside a root itself).
    if (!(g_in > 0.0) || !(g_out < 0.0)) return bracketing();
    double best = std::abs(g_in) <= std::abs(g_out) ? inside : outside;
    double best_g = std::min(std::abs(g_in), std::abs(g_out));
    auto in_bracket = [&](double z) { return z > std::min(inside, outside) && z < std::max(inside, outside); };
    double z = inside + (outside - inside) * (g_in / (g_in - g_out));  // the secant point first
    double step_before_last = std::abs(outside - inside), last_step = step_before_last;
    for (int iteration = 0; iteration < 100; ++iteration) {
        if (!in_bracket(z)) z = 0.5 * (inside + outside);
        const double g = value(z, slope, curvature);
        if (std::abs(g) < best_g) best = z, best_g = std::abs(g);
        if (g == 0.0) return z;
        if (g > 0.0) inside = z;
        else outside = z;
        if (std::abs(outside - inside) <=
            2.0 * std::numeric_limits<double>::epsilon() * std::max(std::abs(inside), std::abs(outside)))
            break;
        double step = std::numeric_limits<double>::infinity();
        const double discriminant = slope * slope - 2.0 * g * curvature;
        if (curvature != 0.0 && discriminant >= 0.0) {
            const double q = -0.5 * (slope + std::copysign(std::sqrt(discriminant), slope));
            for (const double candidate : {q / (0.5 * curvature), q != 0.0 ? g / q : step})
                if (in_bracket(z + candidate) && std::abs(candidate) < std::abs(step)) step = candidate;
        }
        if (!std::isfinite(step) && slope != 0.0) step = -g / slope;
        // Converged: the model's step is within a few dozen ulps of z, the resolution of n − ξ
        // where n is rounded to its ulp (the neighbours are tried below). Tested before the
        // safeguard, which would refuse such steps once they stop halving and bisect a bracket
        // whose other end may be far.
        if (std::abs(step) <= 64.0 * std::numeric_limits<double>::epsilon() * std::abs(z)) break;
        double next = z + step;
        if (!std::isfinite(step) || !in_bracket(next) || std::abs(step) > 0.5 * step_before_last)
            next = 0.5 * (inside + outside);
        step_before_last = last_step;
        last_step = std::abs(next - z);
        // Converged: a bisection step within a few ulps (the neighbours are tried below).
        if (last_step <= 4.0 * std::numeric_limits<double>::epsilon() * std::abs(z)) break;
        z = next;
    }
    // The neighbours of the best point, one ulp each way, where the bracket allows.
    for (const double neighbour : {std::nextafter(best, inside), std::nextafter(best, outside)}) {
        if (!(neighbour >= std::min(inside, outside) && neighbour <= std::max(inside, outside))) continue;
        const double g = std::abs(value(neighbour, slope, curvature));
        if (g < best_g) best = neighbour, best_g = g;
    }
    return best;
}

std::optional<AccessibleInterval> StratifiedProfile::interval_around(const RayLevel& level, double z,
                                                                    bool cell_only_turning) const {
    if (!std::isfinite(z) || z > 0.0 || z < floor_z_)
        throw DataInputError(fmt::format("depth z = {} m is outside the profile's range ({} m to 0)",
                                         number_for_message(z), number_for_message(floor_z_)));
    const double g = gap(level, z);
    if (g < 0.0) return std::nullopt;
    bool start_is_upper_turn = false, start_is_lower_turn = false;
    if (g == 0.0) {
        double n, dn, d2n;
        evaluate(cell_at(z), z, n, dn, d2n);
        if (dn < 0.0) start_is_upper_turn = true;
        else if (dn > 0.0) start_is_lower_turn = true;
        else return std::nullopt;
    }
    // The run holding z: the first whose bottom is at or below z.
    std::size_t r = static_cast<std::size_t>(
        std::partition_point(run_bottoms_.begin(), run_bottoms_.end(), [&](double bottom) { return bottom > z; }) -
        run_bottoms_.begin());
    if (r >= runs_.size()) r = runs_.size() - 1;

    AccessibleInterval out;
    if (start_is_upper_turn) {
        out.upper_kind = UpperEndKind::turning;
        out.upper_z = z;
    } else {
        out.upper_kind = UpperEndKind::surface;
        out.upper_z = 0.0;
        // Upward from the run of z; a run whose top is clearly inside passes on to the nearest
        // run above with a lower n at its top (those in between are inside too).
        std::size_t j = runs_[r].z_top > z ? r : r == 0 ? no_run : r - 1;
        while (j != no_run) {
            const double top = runs_[j].z_top;
            if (clearly_inside(level, runs_[j].index_top)) {
                j = upper_lower_top_[j];
                continue;
            }
            if (clearly_outside(level, runs_[j].index_top) || gap(level, top) <= 0.0) {
                const double inside = j == r ? z : runs_[j].z_bottom;
                out.upper_kind = UpperEndKind::turning;
                out.upper_z = solve_turning(level, inside, top, j == r ? g : not_a_number,
                                            cell_only_turning ? &out.upper_approximate : nullptr);
                out.upper_double_root = out.upper_z == top && is_local_minimum(top);
                break;
            }
            j = j == 0 ? no_run : j - 1;
        }
    }
    if (start_is_lower_turn) {
        out.lower_kind = LowerEndKind::turning;
        out.lower_z = z;
    } else {
        out.lower_kind = bottom_z_ ? LowerEndKind::bottom : LowerEndKind::unbounded;
        out.lower_z = bottom_z_ ? *bottom_z_ : -infinity;
        // Downward in the same way, through runs with a lower n at their bottom.
        std::size_t j = runs_[r].z_bottom < z ? r : r + 1 < runs_.size() ? r + 1 : no_run;
        while (j != no_run) {
            const double bottom = runs_[j].z_bottom;
            if (clearly_inside(level, runs_[j].index_bottom)) {
                j = lower_lower_bottom_[j];
                continue;
            }
            if (clearly_outside(level, runs_[j].index_bottom) || gap(level, bottom) <= 0.0) {
                const double inside = j == r ? z : runs_[j].z_top;
                out.lower_kind = LowerEndKind::turning;
                out.lower_z = solve_turning(level, inside, bottom, j == r ? g : not_a_number,
                                            cell_only_turning ? &out.lower_approximate : nullptr);
                out.lower_double_root = out.lower_z == bottom && is_local_minimum(bottom);
                break;
            }
            j = j + 1 < runs_.size() ? j + 1 : no_run;
        }
    }
    return out;
}

std::vector<AccessibleInterval> StratifiedProfile::intervals(const RayLevel& level) const {
    std::vector<AccessibleInterval> out;
    std::optional<AccessibleInterval> open;
    for (std::size_t i = 0; i < runs_.size(); ++i) {
        const Run& run = runs_[i];
        const double g_top = gap(level, run.z_top), g_bottom = gap(level, run.z_bottom);
        if (i == 0 && g_top > 0.0) open = AccessibleInterval{};
        if (open) {
            if (g_bottom <= 0.0) {
                open->lower_kind = LowerEndKind::turning;
                open->lower_z = solve_turning(level, run.z_top, run.z_bottom);
                open->lower_double_root = open->lower_z == run.z_bottom && is_local_minimum(run.z_bottom);
                if (open->upper_z > open->lower_z) out.push_back(*open);
                open.reset();
            }
        } else if (g_bottom > 0.0) {
            AccessibleInterval next;
            next.upper_kind = UpperEndKind::turning;
            next.upper_z = solve_turning(level, run.z_bottom, run.z_top);
            next.upper_double_root = next.upper_z == run.z_top && is_local_minimum(run.z_top);
            open = next;
        }
    }
    if (open) {
        open->lower_kind = bottom_z_ ? LowerEndKind::bottom : LowerEndKind::unbounded;
        open->lower_z = bottom_z_ ? *bottom_z_ : -infinity;
        out.push_back(*open);
    }
    return out;
}

std::vector<IndexInversion> StratifiedProfile::inversions() const {
    std::vector<IndexInversion> out;
    for (const Run& run : runs_)
        if (run.direction < 0) out.push_back({run.z_top, run.z_bottom, run.index_top, run.index_bottom});
    return out;
}

std::vector<Duct> StratifiedProfile::ducts() const {
    std::vector<double> maxima;
    if (!runs_.empty() && runs_.front().direction < 0) maxima.push_back(0.0);
    for (std::size_t i = 0; i + 1 < runs_.size(); ++i)
        if (runs_[i].direction > 0 && runs_[i + 1].direction < 0) maxima.push_back(runs_[i].z_bottom);
    std::vector<Duct> out;
    for (double axis : maxima) {
        const double n_axis = index(axis);
        const double below = minimum_index(floor_z_, axis).first;
        const double above = axis == 0.0 ? n_axis : minimum_index(axis, 0.0).first;
        if (below >= n_axis) continue;
        Duct duct;
        duct.axis_z = axis;
        duct.ray_parameter_low = below;
        duct.ray_parameter_high = n_axis;
        if (axis == 0.0) duct.surface_ray_parameter = n_axis;
        else if (above > below) duct.surface_ray_parameter = above;
        // Widest extent: the interval just above the lowest ξ of the duct.
        const double xi = below + 1e-9 * (n_axis - below);
        if (const auto interval = interval_around(xi, axis)) {
            duct.z_top = interval->upper_z;
            duct.z_bottom = interval->lower_z;
        }
        out.push_back(duct);
    }
    return out;
}

}  // namespace firnray
