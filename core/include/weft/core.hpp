// weft/core.hpp -- everything of weft's C++ core in one include.
#pragma once

#include "weft/bootstrap.hpp"
#include "weft/distributions.hpp"
#include "weft/error.hpp"
#include "weft/model.hpp"
#include "weft/options.hpp"
#include "weft/panel.hpp"
#include "weft/transforms.hpp"
