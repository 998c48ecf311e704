//! The arithmetic of the RP2040 port, apart from the HAL so that it is tested on the host:
//! ADC pacing and sample timing ([`adc`]), the gate's register sequence ([`gate`]), the PWM
//! carrier ([`pwm`]), the comparator reference ([`reference`]) and the comparator's state
//! across a pulse ([`watch`]). The firmware in the parent folder calls these and only moves
//! registers.
#![cfg_attr(not(test), no_std)]
#![forbid(unsafe_code)]
#![deny(missing_docs)]

pub mod adc;
pub mod gate;
pub mod pwm;
pub mod reference;
pub mod watch;
