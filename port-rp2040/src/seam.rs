//! The driver library's hardware seam, as this port implements it.

pub use coilwise_driver::{
    Capture, Crossing, CurrentSense, SenseErrorKind, SensePlan, SenseScale, TickSource,
};
