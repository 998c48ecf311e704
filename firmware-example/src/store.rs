//! The application's baseline store: each channel's learnt baseline kept in one flash page as the
//! core's fixed-size record (marker, version, figures, CRC-32), slot `i` at byte
//! `i·RECORD_LEN`; an erased slot (0xFF) means "none stored".
//!
//! Saving erases the page and programs every record the driver holds, and only when something
//! changed (a page has a limited number of erase cycles). Loading hands every slot to
//! [`coilwise_driver::Driver::import_baseline`], which refuses an erased, corrupted or foreign
//! record with a clear reason; that channel then learns afresh at commissioning.

use coilwise::diagnosis::baseline::RECORD_LEN;
use coilwise_driver::{CurrentSense, DriverError, ErrorKind};

use crate::board::flash::{FlashError, SimFlash, PAGE_BYTES};
use crate::demo::Drv;
use crate::scenario::{Names, CHANNELS};

const _: () = assert!(CHANNELS * RECORD_LEN <= PAGE_BYTES);

/// The slot of channel `i` in the page.
const fn slot(i: usize) -> usize {
    i * RECORD_LEN
}

/// Logs channel `i`'s baseline figures.
fn log_baseline<Sw, Pwm, Sense: CurrentSense>(
    drv: &Drv<'_, Sw, Pwm, Sense>,
    i: usize,
    name: &str,
    what: &str,
) {
    if let Some(b) = drv.baseline(i) {
        defmt::info!(
            "  slot {=usize} {=str} {=str}: L {=f32} mH, R(20 C) {=f32} ohm, fast component {=f32} % of final, tau {=f32} ms, learnt from {=u8} pulses{=str}",
            i,
            name,
            what,
            b.inductance().value() * 1e3,
            b.resistance().value(),
            b.head_fraction() * 100.0,
            b.tau().value() * 1e3,
            b.pulses(),
            if b.temperature().is_some() { " at a known board temperature" } else { "" }
        );
    }
}

/// Writes every baseline the driver holds into the page (erased slots for the channels without
/// one), unless the page already holds exactly that. Returns the records stored.
///
/// # Errors
/// The flash's (programming refused).
#[inline(never)]
pub fn save<Sw, Pwm, Sense: CurrentSense>(
    drv: &Drv<'_, Sw, Pwm, Sense>,
    flash: &mut SimFlash,
    specs: &Names,
) -> Result<u8, FlashError> {
    // One slot at a time (40 bytes of stack, not a page): what the slot must hold, and whether
    // it already does.
    let want = |i: usize| drv.baseline_record(i).unwrap_or([0xFF; RECORD_LEN]);
    let mut held = [0u8; RECORD_LEN];
    let mut same = true;
    let mut stored = 0u8;
    for i in 0..CHANNELS {
        flash.read(slot(i), &mut held)?;
        same &= held == want(i);
        stored += u8::from(drv.baseline(i).is_some());
    }
    if same {
        defmt::info!(
            "flash: the page already holds these {=u8} baseline record(s); not erased",
            stored
        );
        return Ok(stored);
    }
    flash.erase();
    let mut exact = true;
    for i in 0..CHANNELS {
        let w = want(i);
        flash.program(slot(i), &w)?;
        flash.read(slot(i), &mut held)?;
        exact &= held == w;
    }
    defmt::info!(
        "flash: page erased and {=u8} baseline record(s) of {=usize} bytes programmed (read back {=str}; erase cycles {=u32})",
        stored,
        RECORD_LEN,
        if exact { "byte-exact" } else { "DIFFERENT" },
        flash.erases()
    );
    for (i, s) in specs.iter().enumerate() {
        log_baseline(drv, i, s, "stored");
    }
    Ok(stored)
}

/// Offers every slot of the page to the driver (after [`crate::demo::Drv`]'s construction,
/// before commissioning). Returns, per channel, whether its record was taken.
#[inline(never)]
pub fn load<Sw, Pwm, Sense: CurrentSense>(
    drv: &mut Drv<'_, Sw, Pwm, Sense>,
    flash: &SimFlash,
    specs: &Names,
) -> [bool; CHANNELS] {
    let mut taken = [false; CHANNELS];
    for (i, s) in specs.iter().enumerate() {
        let mut rec = [0u8; RECORD_LEN];
        if flash.read(slot(i), &mut rec).is_err() {
            continue;
        }
        match drv.import_baseline(i, &rec) {
            Ok(()) => {
                taken[i] = true;
                log_baseline(drv, i, s, "loaded from flash");
            }
            // Refused: the driver queued the reason as an event (logged with the others).
            Err(DriverError {
                kind: ErrorKind::Baseline(_),
                ..
            }) => {}
            Err(e) => defmt::error!("  slot {=usize}: {}", i, e),
        }
    }
    taken
}
