// Cooperative cancellation and progress reporting for long computations.
// The library only reads the flag and calls the callback; the front end owns signals and terminals.
#pragma once

#include <atomic>
#include <cstddef>
#include <functional>

namespace firnray {

struct RunControl {
    const std::atomic<bool>* cancel = nullptr;  // set by the front end on SIGINT
    // Called now and then with (done, total). May be empty. Must be thread-safe.
    std::function<void(std::size_t, std::size_t)> progress;

    bool cancelled() const { return cancel != nullptr && cancel->load(std::memory_order_relaxed); }
    void throw_if_cancelled() const;
};

}  // namespace firnray
