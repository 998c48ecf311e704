//! Host-side tests and simulation support for `coilwise` (reference checks live in `tests/`).
