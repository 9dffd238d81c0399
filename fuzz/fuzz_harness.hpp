// The one function every harness in fuzz/ defines: feed one input to the code under test. It is
// called by libFuzzer (libfuzzer_main.cpp, in the fuzz build) and by the replay program
// (replay_main.cpp, in every build), which is how crash inputs become regression tests.
// The contract it checks: every exception that leaves the library is a firnray::Error; anything
// else (another exception, a crash, a sanitizer report, a broken invariant) is a finding.
#pragma once

#include <cstddef>
#include <cstdint>

int fuzz_one(const std::uint8_t* data, std::size_t size);
