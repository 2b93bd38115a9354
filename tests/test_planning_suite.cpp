// The planning reference suite (tests/planning/*.toml, each with its .ref beside it).
#include <doctest/doctest.h>
