// Catch2 v2 main, compiled once for the whole suite.
#define CATCH_CONFIG_MAIN
#include <catch2/catch.hpp>
