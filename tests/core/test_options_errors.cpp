#include "core_support.hpp"
