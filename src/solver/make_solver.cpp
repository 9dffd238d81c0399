#include "solver/make_solver.hpp"

#include <fmt/format.h>

#include "core/errors.hpp"
#include "core/text.hpp"
#include "solver/closed_form_solver.hpp"
#include "solver/numeric_solver.hpp"
#include "solver/stratified_intervals.hpp"
#include "solver/stratified_solver.hpp"

namespace firnray {

SolverChoice parse_solver_choice(const std::string& text) {
    if (text == "auto") return SolverChoice::automatic;
    if (text == "closed") return SolverChoice::closed;
    if (text == "numeric") return SolverChoice::numeric;
    if (text == "stratified") return SolverChoice::stratified;
    throw DataInputError(fmt::format("'{}' is not a solver (auto, closed, numeric or stratified){}", text,
                                     did_you_mean(text, {"auto", "closed", "numeric", "stratified"})),
                         {"", 0, "solver"});
}

std::unique_ptr<RaySolver> make_solver(std::shared_ptr<const FirnModel> model, SolverChoice choice,
                                       double numeric_tolerance) {
    const std::string kind = model->index->kind();
    const bool closed_form_applies = kind == "exponential" || kind == "constant";
    if (choice == SolverChoice::closed && !closed_form_applies)
        throw ModelInputError(fmt::format("the closed-form solver needs an exponential (or constant) index profile; "
                                          "model '{}' is {}: use --solver stratified, numeric or auto",
                                          model->name, kind),
                              {model->origin, 0, "index.kind"});
    if (choice == SolverChoice::numeric) {
        // The integrator cannot follow a ray through a depth range where n falls with depth (it
        // would fail pair by pair, later and less clearly): refuse the model now.
        const auto inversions = make_stratified_profile(*model)->inversions();
        if (!inversions.empty())
            throw ModelInputError(
                fmt::format("the numeric solver cannot trace rays through model '{}': its index falls with depth "
                            "from depth {} m to {} m (n {} to {}){}; use --solver stratified or auto",
                            model->name, number_for_message(-inversions.front().z_top),
                            number_for_message(-inversions.front().z_bottom),
                            number_for_message(inversions.front().index_top),
                            number_for_message(inversions.front().index_bottom),
                            inversions.size() > 1 ? fmt::format(", the first of {} such ranges", inversions.size())
                                                  : std::string()),
                {model->origin, 0, "index"});
        IntegrationTolerances tolerances;
        if (numeric_tolerance > 0.0) tolerances.relative = tolerances.absolute = numeric_tolerance;
        return std::make_unique<NumericSolver>(std::move(model), tolerances);
    }
    if (choice == SolverChoice::stratified || (choice == SolverChoice::automatic && !closed_form_applies))
        return std::make_unique<StratifiedSolver>(std::move(model));
    return std::make_unique<ClosedFormSolver>(std::move(model));
}

}  // namespace firnray
