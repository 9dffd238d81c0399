// libFuzzer's entry point for a harness of fuzz/ (linked with -fsanitize=fuzzer, which brings main).
#include "fuzz_harness.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) { return fuzz_one(data, size); }
