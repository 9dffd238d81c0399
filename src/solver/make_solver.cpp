#include "solver/make_solver.hpp"

#include <fmt/format.h>

#include "core/errors.hpp"
#include "solver/closed_form_solver.hpp"
#include "solver/numeric_solver.hpp"

namespace firnray {

SolverChoice parse_solver_choice(const std::string& text) {
    if (text == "auto") return SolverChoice::automatic;
    if (text == "closed") return SolverChoice::closed;
    if (text == "numeric") return SolverChoice::numeric;
    throw DataInputError(fmt::format("'{}' is not a solver (auto, closed or numeric)", text), {"", 0, "solver"});
}

std::unique_ptr<RaySolver> make_solver(std::shared_ptr<const FirnModel> model, SolverChoice choice) {
    const std::string kind = model->index->kind();
    const bool closed_form_applies = kind == "exponential" || kind == "constant";
    if (choice == SolverChoice::closed && !closed_form_applies)
        throw ModelInputError(fmt::format("the closed-form solver needs an exponential (or constant) index profile; "
                                          "model '{}' is {}: use --solver numeric or auto",
                                          model->name, kind),
                              {model->origin, 0, "index.kind"});
    if (choice == SolverChoice::numeric || (choice == SolverChoice::automatic && !closed_form_applies))
        return std::make_unique<NumericSolver>(std::move(model));
    return std::make_unique<ClosedFormSolver>(std::move(model));
}

}  // namespace firnray
