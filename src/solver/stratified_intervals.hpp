// Any horizontally stratified index profile as a ray of parameter ξ sees it (physics notes §8):
// the accessible interval of depths around a point (where n(z) > ξ), its ends (surface, turning
// point, bottom, or none), every such interval of the profile, and where n falls with depth and
// the ducts that makes. The profile is cut into cells (a table's pieces, exactly as cubics), so
// that the Snell integrals (solver/snell_integrals.hpp) can evaluate n without virtual calls.
#pragma once

#include <atomic>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <limits>
#include <memory>
#include <mutex>
#include <optional>
#include <string>
#include <vector>

#include "model/index_profile.hpp"

namespace firnray {

class StratifiedProfile;

// Per-cell tables of the whole-cell Snell integrals over the ray parameter (defined and filled by
// solver/snell_integrals.cpp); made with the profile and shared by its copies.
struct SnellCellTables;
std::shared_ptr<SnellCellTables> make_snell_cell_tables(const StratifiedProfile& profile);

// A ray parameter ξ. Given plainly, n(z) − ξ is a difference of two numbers near n; given as
// ξ = n(anchor_z) − offset it is the difference n(z) − n(anchor_z), evaluated from the profile's
// formula without cancellation, plus offset. The second form resolves rays whose n − ξ is far
// below the precision of n itself (deep ice near n_deep, rays horizontal at an end).
struct RayLevel {
    double ray_parameter = 0.0;
    bool anchored = false;
    double anchor_z = 0.0;
    double offset = 0.0;
    // Filled by anchored_at: the profile cell of the anchor and n there.
    std::size_t anchor_cell = 0;
    double anchor_index = 0.0;

    static RayLevel plain(double ray_parameter);
    static RayLevel anchored_at(const StratifiedProfile& profile, double anchor_z, double offset);
    // The same anchor with another offset (no lookup of the anchor's cell and n again).
    RayLevel with_offset(double new_offset) const {
        RayLevel level = *this;
        level.offset = new_offset;
        level.ray_parameter = anchor_index - new_offset;
        return level;
    }
};

enum class UpperEndKind : unsigned char { surface, turning };
enum class LowerEndKind : unsigned char { turning, bottom, unbounded };
const char* to_string(UpperEndKind kind);
const char* to_string(LowerEndKind kind);

// The connected set of depths around a point where n(z) > ξ, with how a ray leaves it at each end.
struct AccessibleInterval {
    UpperEndKind upper_kind = UpperEndKind::surface;
    double upper_z = 0.0;  // 0 at the surface
    LowerEndKind lower_kind = LowerEndKind::unbounded;
    double lower_z = 0.0;  // −infinity when unbounded
    // A turning end where dn/dz = 0 too (ξ equal to a local minimum of n): the ray approaches it
    // horizontally and never arrives; every leg ending there is infinitely long (a limit).
    bool upper_double_root = false;
    bool lower_double_root = false;
    // A turning end known to its cell only (interval_around with cell_only_turning): its z lies
    // inside the cell that holds the turning point, not on it.
    bool upper_approximate = false;
    bool lower_approximate = false;

    bool contains(double z) const { return z <= upper_z && z >= lower_z; }
    // Bounded by turning points on both sides: the ray oscillates between them.
    bool is_duct() const { return upper_kind == UpperEndKind::turning && lower_kind == LowerEndKind::turning; }
};

// Depths between z_top and z_bottom (z_top > z_bottom) where n falls with depth.
struct IndexInversion {
    double z_top = 0.0, z_bottom = 0.0;
    double index_top = 0.0, index_bottom = 0.0;  // n_top > n_bottom
};

// A duct: rays with ray_parameter_low < ξ < ray_parameter_high near axis_z (a local maximum of n)
// cannot leave the depths between a turning point below and a turning point (or the surface)
// above. z_top, z_bottom: its widest extent, reached as ξ → ray_parameter_low.
struct Duct {
    double axis_z = 0.0;
    double ray_parameter_low = 0.0, ray_parameter_high = 0.0;
    double z_top = 0.0, z_bottom = 0.0;
    // Rays with ξ below this reflect at the surface instead of turning above (no value: every ray
    // of the duct turns above). Equal to ray_parameter_high when the axis is the surface itself.
    std::optional<double> surface_ray_parameter;
};

// The profile prepared for the questions above. Cells: the profile's pieces (IndexProfile::joins_z),
// each kept as a cubic when it is one (a table), as the exponential formula, or evaluated through
// IndexProfile::piece_index; smooth profiles without joins are cut into cells a few metres long.
// Runs: the depth ranges between the local extrema of n, on each of which n is monotone.
// Below floor_z() (the bottom when given, else the deeper of analysis_depth_m and 100 m below the
// deepest join) n is taken not to decrease with depth, as in every model kind of firnray.
class StratifiedProfile {
public:
    static constexpr double default_analysis_depth_m = 4000.0;

    // bottom_z: a reflecting bottom (< 0). Throws ModelInputError for a bottom at or above the
    // surface, a non-finite value or an analysis depth that is not positive.
    explicit StratifiedProfile(std::shared_ptr<const IndexProfile> profile, std::optional<double> bottom_z = {},
                               double analysis_depth_m = default_analysis_depth_m);

    const IndexProfile& profile() const { return *profile_; }
    std::optional<double> bottom_z() const { return bottom_z_; }
    double floor_z() const { return floor_z_; }

    // The cell holding z; at a boundary between two cells the one on the side `toward` (> 0 the
    // cell above, < 0 the cell below).
    std::size_t cell_at(double z, int toward = -1) const;
    std::size_t cell_count() const { return cells_.size(); }
    double cell_top(std::size_t cell) const { return cells_[cell].z_top; }
    double cell_bottom(std::size_t cell) const { return cells_[cell].z_bottom; }
    // n, dn/dz and d²n/dz² of one cell's formula at z (continued beyond the cell if z is outside).
    // Inline for the tables' cubic cells: the quadrature and the turning-point solver call it
    // millions of times per batch, and the call cost more than the cubic.
    void evaluate(std::size_t cell, double z, double& n, double& dn_dz, double& d2n_dz2) const {
        const Cell& c = cells_[cell];
        if (c.form != Form::cubic) return evaluate_formula(cell, z, n, dn_dz, d2n_dz2);
        const double t = z - c.z_top;
        n = c.c[0] + t * (c.c[1] + t * (c.c[2] + t * c.c[3]));
        dn_dz = c.c[1] + t * (2.0 * c.c[2] + 3.0 * t * c.c[3]);
        d2n_dz2 = 2.0 * c.c[2] + 6.0 * t * c.c[3];
    }
    // d³n/dz³ of a cell's formula at z: exact for cubic and exponential cells, 0 for the others
    // (their cells are short, see above). Used to bound the distance to the zeros of n² − ξ².
    double third_derivative(std::size_t cell, double z) const;
    // The largest n on a cell (at an end or at an extremum of n inside it).
    double cell_max_index(std::size_t cell) const { return cell_max_index_[cell]; }
    // Whether a cell is kept as a cubic (a table's piece): its expansions about any point are exact.
    bool is_cubic(std::size_t cell) const { return cells_[cell].form == Form::cubic; }
    double index(double z) const;
    // (n(z) − n(z_ref)) / (z − z_ref) for two points of one cell, without cancellation; dn/dz at
    // z_ref when z = z_ref. Inline for cubic cells, as evaluate().
    double divided_difference(std::size_t cell, double z, double z_ref) const {
        const Cell& c = cells_[cell];
        if (c.form != Form::cubic) return formula_divided_difference(cell, z, z_ref);
        const double t = z - c.z_top, s = z_ref - c.z_top;
        return c.c[1] + c.c[2] * (t + s) + c.c[3] * (t * t + t * s + s * s);
    }
    // n(z) − n(z_ref) for any two depths, exact to rounding when they are close.
    double index_difference(double z, double z_ref) const;
    // n(z) − ξ for a ray level.
    double gap(const RayLevel& level, double z) const;
    // The same at a point of a known cell where n is known already (the quadrature's inner loop).
    // Inline: the quadrature calls it at every node.
    double gap_in_cell(const RayLevel& level, std::size_t cell, double z, double n_z) const {
        if (!level.anchored) {
            if (exponential_) return exponential_gap(level, z);
            return n_z - level.ray_parameter;
        }
        const std::size_t ca = level.anchor_cell;
        if (!exponential_ && cell != ca && cell + 1 != ca && ca + 1 != cell)
            return (n_z - level.anchor_index) + level.offset;
        return anchored_gap_in_cell(level, cell, z, n_z);
    }

    struct Run {
        double z_top = 0.0, z_bottom = 0.0;
        double index_top = 0.0, index_bottom = 0.0;
        int direction = 0;  // +1: n grows with depth, −1: n falls with depth, 0: constant
    };
    const std::vector<Run>& runs() const { return runs_; }
    // Local minima of n (z where a run falling with depth meets one growing with depth).
    const std::vector<double>& local_minima_z() const { return minima_z_; }
    // Where an end of an accessible interval jumps as ξ crosses n there, from the surface down:
    // the local minima of n and both ends of every stretch where n is constant (a table's flat
    // segment). Next to such a stretch a ray with ξ just below its n crosses it nearly horizontally
    // (X → ∞), one with ξ just above turns at its far edge; the ranges of ξ are cut there.
    const std::vector<double>& stationary_z() const { return stationary_z_; }
    // The smallest n on [z_low, z_high] and a depth where it is reached.
    std::pair<double, double> minimum_index(double z_low, double z_high) const;

    // The accessible interval around z for ray level `level`, empty when n(z) < ξ. At n(z) = ξ
    // exactly (z is a turning point) the side where n > ξ; empty when n has a maximum there.
    // With cell_only_turning, a turning end on a table's cubic cells is placed inside the cell that
    // holds it without solving for it (flagged approximate): for legs whose turning part comes from
    // the cell's table, which needs the cell and ξ only.
    std::optional<AccessibleInterval> interval_around(const RayLevel& level, double z,
                                                      bool cell_only_turning = false) const;
    std::optional<AccessibleInterval> interval_around(double ray_parameter, double z) const {
        return interval_around(RayLevel::plain(ray_parameter), z);
    }
    // Every accessible interval between the surface and floor_z(), from the top down.
    std::vector<AccessibleInterval> intervals(const RayLevel& level) const;
    std::vector<AccessibleInterval> intervals(double ray_parameter) const { return intervals(RayLevel::plain(ray_parameter)); }

    std::vector<IndexInversion> inversions() const;
    std::vector<Duct> ducts() const;

    // The tables the Snell integrals keep for this profile's cells: laid out on first use and
    // filled lazily, safe to use from several threads at once (see solver/snell_integrals.hpp).
    SnellCellTables& snell_cell_tables() const;

private:
    enum class Form : unsigned char { cubic, exponential, generic };
    struct Cell {
        double z_top = 0.0, z_bottom = 0.0;
        Form form = Form::generic;
        std::size_t piece = 0;
        double c[4] = {0.0, 0.0, 0.0, 0.0};  // cubic in t = z − z_top
    };
    void build_cells(double analysis_depth_m);
    // gap_in_cell() of an unanchored level on the exponential profile, and of an anchored level
    // (z in the anchor's cell or a neighbour of it, or the exponential profile).
    double exponential_gap(const RayLevel& level, double z) const;
    double anchored_gap_in_cell(const RayLevel& level, std::size_t cell, double z, double n_z) const {
        const double za = level.anchor_z;
        if (exponential_) return -exp_b_ * std::exp(exp_c_ * za) * std::expm1(exp_c_ * (z - za)) + level.offset;
        const std::size_t ca = level.anchor_cell;
        if (cell == ca) return divided_difference(cell, z, za) * (z - za) + level.offset;
        if (cell + 1 == ca || ca + 1 == cell) {
            const double boundary = cell < ca ? cells_[cell].z_bottom : cells_[cell].z_top;
            return divided_difference(cell, z, boundary) * (z - boundary) +
                   divided_difference(ca, boundary, za) * (boundary - za) + level.offset;
        }
        return (n_z - level.anchor_index) + level.offset;
    }
    // evaluate() for the exponential and generic cells.
    void evaluate_formula(std::size_t cell, double z, double& n, double& dn_dz, double& d2n_dz2) const;
    // divided_difference() for the exponential and generic cells.
    double formula_divided_difference(std::size_t cell, double z, double z_ref) const;
    void add_piece_cells(std::size_t piece, double z_top, double z_bottom);
    void build_runs();
    // The turning point between z_inside (gap > 0) and z_outside (gap <= 0) of one run; gap_inside:
    // gap() at z_inside when known (NaN: computed here).
    // cell_only (not null): where the cell holding the turning point is found from the stored
    // boundary values of a table's cells, a depth strictly inside that cell instead, with
    // *cell_only set true (false where the point was solved for).
    double solve_turning(const RayLevel& level, double z_inside, double z_outside,
                         double gap_inside = std::numeric_limits<double>::quiet_NaN(), bool* cell_only = nullptr) const;
    // n − ξ at the bottom of a cell from the stored n there; NaN where that is within rounding of 0.
    double boundary_gap(const RayLevel& level, std::size_t cell) const;
    bool is_local_minimum(double z) const;
    // n − ξ from a known n: through the anchor's n for an anchored level (to a few rounding errors
    // of n, which the two tests below allow for).
    static double approximate_gap(const RayLevel& level, double n);
    // How far approximate_gap may be from gap(): a few rounding errors of n, with room to spare.
    static double rounding_margin(double n);
    // Whether n − ξ at a point where n is known is positive beyond any doubt (no need for gap()).
    bool clearly_inside(const RayLevel& level, double n) const;
    // The same for n − ξ < 0, on tables (no need for gap() either).
    bool clearly_outside(const RayLevel& level, double n) const;

    std::shared_ptr<const IndexProfile> profile_;
    std::optional<double> bottom_z_;
    double floor_z_ = 0.0;
    bool exponential_ = false;
    bool all_cubic_ = true;  // every cell a table's cubic
    double exp_a_ = 0.0, exp_b_ = 0.0, exp_c_ = 0.0;  // n = A − B e^{C z}
    std::vector<Cell> cells_;                          // from the surface down
    std::vector<double> cell_bottoms_;                 // cells_[i].z_bottom, for cell_at
    std::vector<double> cell_bottom_index_;            // n there, from cells_[i]'s formula
    std::vector<double> cell_max_index_;               // see cell_max_index
    // cell_at's index: the depth range cut into equal buckets, bucket i from bucket_edges_[i] down
    // to bucket_edges_[i + 1]; the answer for any z in it lies in bucket_cells_[i] (first, last].
    double bucket_floor_ = 0.0;
    double bucket_scale_ = 0.0;  // buckets per metre of depth: bucket_cells_.size() / bucket_floor_
    double cells_per_metre_ = 0.0;  // 1/h where every cell but the last is h high from the surface (0: not so)
    std::vector<double> bucket_edges_;
    std::vector<std::pair<std::uint32_t, std::uint32_t>> bucket_cells_;
    void build_cell_buckets();
    std::vector<Run> runs_;                            // from the surface down
    std::vector<double> run_bottoms_;                  // runs_[i].z_bottom
    static constexpr std::size_t no_run = static_cast<std::size_t>(-1);
    std::vector<std::size_t> upper_lower_top_;         // see build_runs
    std::vector<std::size_t> lower_lower_bottom_;
    std::vector<double> minima_z_;
    std::vector<double> stationary_z_;
    struct LazySnellTables {
        std::once_flag made;
        std::shared_ptr<SnellCellTables> tables;
        std::atomic<SnellCellTables*> ready{nullptr};  // tables.get() once made (the fast path)
    };
    std::shared_ptr<LazySnellTables> snell_tables_ = std::make_shared<LazySnellTables>();
};

}  // namespace firnray
