// A small fork-join loop for the embarrassingly parallel parts (tables, map rows, batches).
// Work item i always produces the same result whatever the thread count, so outputs do not
// depend on --threads.
#pragma once

#include <algorithm>
#include <atomic>
#include <cstddef>
#include <exception>
#include <mutex>
#include <thread>
#include <vector>

#include "core/cancel.hpp"

namespace firnray {

// Runs body(i) for i in [0, count) on `threads` threads (interleaved), polls the cancel flag,
// reports progress, and rethrows the first exception thrown by a worker.
template <class Body>
void parallel_for(std::size_t count, int threads, const RunControl& control, Body&& body) {
    const std::size_t workers =
        std::clamp<std::size_t>(threads < 1 ? 1 : static_cast<std::size_t>(threads), 1, std::max<std::size_t>(count, 1));
    std::exception_ptr failure;
    std::mutex failure_mutex;
    std::atomic<std::size_t> done{0};
    std::atomic<bool> stop{false};
    auto run = [&](std::size_t worker) {
        try {
            for (std::size_t i = worker; i < count && !stop.load(std::memory_order_relaxed); i += workers) {
                control.throw_if_cancelled();
                body(i);
                const std::size_t finished = done.fetch_add(1, std::memory_order_relaxed) + 1;
                if (control.progress && (finished % 64 == 0 || finished == count)) control.progress(finished, count);
            }
        } catch (...) {
            std::lock_guard lock(failure_mutex);
            if (!failure) failure = std::current_exception();
            stop = true;
        }
    };
    if (workers == 1) {
        run(0);
    } else {
        std::vector<std::thread> pool;
        pool.reserve(workers);
        for (std::size_t w = 0; w < workers; ++w) pool.emplace_back(run, w);
        for (auto& t : pool) t.join();
    }
    if (failure) std::rethrow_exception(failure);
}

}  // namespace firnray
