// Catch2 v2 has no separate main library: this file provides main().
#define CATCH_CONFIG_MAIN
#include <catch2/catch.hpp>
