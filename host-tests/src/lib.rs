//! Host-side tests and simulation for `coilwise`.
