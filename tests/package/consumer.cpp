// Uses the installed library through its public headers only: the built-in model's index at
// 100 m depth and the paths between a source and a receiver with the automatic solver.
#include <cstdio>
#include <memory>

#include "core/errors.hpp"
#include "model/model_file.hpp"
#include "paths/find_paths.hpp"
#include "solver/make_solver.hpp"

int main() {
    try {
        auto model = std::make_shared<const firnray::FirnModel>(firnray::default_model());
        std::printf("index at 100 m depth: %.6f\n", model->index_at(-100.0));
        const auto solver = firnray::make_solver(model, firnray::SolverChoice::automatic);
        const auto paths = firnray::find_paths(*solver, {250.0, 0.0, -20.0}, {0.0, 0.0, -100.0});
        for (const auto& path : paths)
            std::printf("path %s: %.3f ns\n", firnray::to_string(path.kind), path.time_s * 1e9);
        return paths.empty() ? 1 : 0;
    } catch (const firnray::Error& e) {
        std::fprintf(stderr, "firnray_consumer: %s\n", e.what());
        return 1;
    }
}
