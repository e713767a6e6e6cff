"""growthcore tests (a package, so that `tests.…` imports resolve here and not to another distribution's
top-level tests)."""
