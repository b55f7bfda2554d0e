// The one translation unit that compiles toml++ (the rest include it with TOML_HEADER_ONLY=0).
#define TOML_IMPLEMENTATION
#include "core/input/toml.hpp"
