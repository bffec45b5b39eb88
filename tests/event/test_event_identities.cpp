#include "event_support.hpp"
