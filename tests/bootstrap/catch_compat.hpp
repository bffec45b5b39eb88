// Catch2 v3 where installed, v2 (Debian 12 ships 2.13) otherwise: the tests use only
// macros common to both.
#pragma once
#if __has_include(<catch2/catch_test_macros.hpp>)
#include <catch2/catch_test_macros.hpp>
#include <catch2/catch_get_random_seed.hpp>
#else
#include <catch2/catch.hpp>
#endif
