//! The arithmetic of the RP2040 port, apart from the HAL so that it is tested on the host:
//! ADC pacing and sample timing ([`adc`]), the comparator reference ([`reference`]) and the
//! PWM carrier ([`pwm`]). The firmware in the parent folder calls these and only moves
//! registers.
#![cfg_attr(not(test), no_std)]
#![forbid(unsafe_code)]
#![deny(missing_docs)]

pub mod adc;
pub mod pwm;
pub mod reference;
