//! Host-side tests of `coilwise` (the tests live in `tests/`).
