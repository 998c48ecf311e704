//! The demo's loop on the driver: commissioning, then the programme's requests at their times,
//! [`coilwise_driver::Driver::service`] at every instant it asks for, and every event logged
//! ([`crate::log`]) and checked ([`Checker`]). This is what an application's main loop looks like
//! on top of the library; the board's clock stands in for a timer interrupt.

use coilwise::{Instant, Ticks};
use coilwise_driver::{CurrentSense, DriverError, Granted, Pulse, TickSource};
use embedded_hal::delay::DelayNs;
use embedded_hal::digital::OutputPin;
use embedded_hal::pwm::SetDutyCycle;

use crate::demo::{Checker, Drv, Outcome, StartAt, Step, PROGRAMME, STEPS};
use crate::scenario::{Names, CHANNELS};

/// The pulse a programme step asks for, with the run's time origin `t0`.
fn pulse_of(t0: Instant, s: &Step) -> Pulse {
    let ticks = Ticks(s.duration_ms * 1000);
    let mut p = match s.start {
        StartAt::Now => Pulse::now(ticks),
        StartAt::At(ms) => Pulse::at(t0.after(Ticks(ms * 1000)), ticks),
    };
    if let Some(w) = s.within_ms {
        p = p.within(Ticks(w * 1000));
    }
    p
}

/// Logs and checks every queued event of the driver.
#[inline(never)]
fn drain<Sw, Pwm, Sense>(
    drv: &mut Drv<'_, Sw, Pwm, Sense>,
    now: Instant,
    specs: &Names,
    bands: &[(f32, f32); CHANNELS],
    checker: &mut Checker,
    check: bool,
) where
    Sw: OutputPin,
    Pwm: SetDutyCycle,
    Sense: CurrentSense,
{
    while let Some(e) = drv.pop_event() {
        let last = drv.last_verdict(usize::from(e.channel));
        crate::log::event(checker.origin, now, &e, last, specs, bands);
        if check {
            checker.event(&e);
        }
    }
}

/// Makes programme step `index`'s request and hands its outcome to the checker.
#[inline(never)]
fn request<Sw, Pwm, Sense>(
    drv: &mut Drv<'_, Sw, Pwm, Sense>,
    now: Instant,
    index: usize,
    s: &Step,
    name: &str,
    checker: &mut Checker,
) where
    Sw: OutputPin,
    Pwm: SetDutyCycle,
    Sense: CurrentSense,
{
    let us = now.since(checker.origin).max(0) as u32;
    defmt::info!(
        "t={=u32}.{=u32:03} ms  request: ch{=usize} {=str} for {=u32} ms{=str}",
        us / 1000,
        us % 1000,
        s.channel,
        name,
        s.duration_ms,
        match (s.start, s.within_ms) {
            (StartAt::Now, None) => ", as soon as allowed",
            (StartAt::Now, Some(_)) => ", now or refuse",
            (StartAt::At(_), _) => ", at a set time",
        }
    );
    match drv.request(now, s.channel, pulse_of(checker.origin, s)) {
        Ok(Granted::Accepted { .. }) => checker.request(index, &Outcome::Accepted),
        Ok(Granted::Delayed { reason, .. }) => checker.request(index, &Outcome::Delayed(reason)),
        Ok(Granted::AwaitingSupplyCheck) => {
            defmt::info!("  supply rail flagged low: a diagnostic pulse re-checks it first");
            if let Some(slot) = checker.awaiting.get_mut(s.channel) {
                *slot = Some(index);
            }
        }
        Err(r) => checker.request(index, &Outcome::Refused(r)),
    }
}

/// Runs the programme on the driver: services it at every instant it asks for, makes each
/// programme request at its time, logs and checks every event, until every request is handled
/// and nothing is pending. Returns the end of the run, ms after power-up.
///
/// # Errors
/// The driver's (time going backwards: a broken clock).
#[inline(never)]
pub fn run<Sw, Pwm, Sense, C>(
    drv: &mut Drv<'_, Sw, Pwm, Sense>,
    clock: &mut C,
    specs: &Names,
    checker: &mut Checker,
) -> Result<u32, DriverError>
where
    Sw: OutputPin,
    Pwm: SetDutyCycle,
    Sense: CurrentSense,
    C: TickSource + DelayNs,
{
    let bands: [(f32, f32); CHANNELS] = core::array::from_fn(|i| {
        drv.sense_setup(i)
            .and_then(|s| s.band)
            .map_or((0.0, 0.0), |b| {
                (b.time.min.value() * 1e3, b.time.max.value() * 1e3)
            })
    });
    defmt::info!("run: {=usize} requests (times are from power-up)", STEPS);
    let t0 = checker.origin;
    let mut next = 0usize;
    loop {
        let now = clock.now();
        let wake = drv.service(now)?;
        drain(drv, now, specs, &bands, checker, true);
        let before = next;
        while let Some((s, _)) = PROGRAMME.get(next) {
            if !now.is_at_or_after(t0.after(Ticks(s.at_ms * 1000))) {
                break;
            }
            let name = specs.get(s.channel).copied().unwrap_or("?");
            request(drv, now, next, s, name, checker);
            // The request's own outcome, already checked from its return value: log only.
            drain(drv, now, specs, &bands, checker, false);
            next += 1;
        }
        if next != before {
            // New requests: service again now, for edges due at once.
            continue;
        }
        let mut until = wake;
        if let Some((s, _)) = PROGRAMME.get(next) {
            let t = t0.after(Ticks(s.at_ms * 1000));
            if t.since(until) < 0 {
                until = t;
            }
        } else if drv.idle() {
            break;
        }
        let d = until.since(clock.now());
        if d > 0 {
            clock.delay_us(d as u32);
        }
    }
    let us = clock.now().since(t0).max(0) as u32;
    defmt::info!("run: programme done at t={=u32} ms", us / 1000);
    Ok(us / 1000)
}

/// Commissioning, logged: the self-check vectors and the converter zeros now, then the
/// diagnostic pulses, serviced until the driver reports commissioning done. Returns whether the
/// driver may be used.
#[inline(never)]
pub fn commission<Sw, Pwm, Sense, C>(
    drv: &mut Drv<'_, Sw, Pwm, Sense>,
    clock: &mut C,
    specs: &Names,
    checker: &mut Checker,
) -> bool
where
    Sw: OutputPin,
    Pwm: SetDutyCycle,
    Sense: CurrentSense,
    C: TickSource + DelayNs,
{
    crate::log::vectors();
    match drv.commission(clock.now()) {
        Ok(()) => {}
        Err(e) => {
            defmt::error!(
                "commissioning stopped the firmware: {}; no coil will be driven",
                e
            );
            return false;
        }
    }
    defmt::info!("commissioning 2/3: converter zero and comparator, per channel");
    for (i, s) in specs.iter().enumerate() {
        if let Some(z) = drv.sense_setup(i) {
            crate::log::sense_setup(i, s, z);
        }
    }
    defmt::info!("commissioning 3/3: a diagnostic pulse below pull-in, per channel");
    let bands = bands(drv);
    while drv.phase() == coilwise_driver::Phase::Running {
        let now = clock.now();
        let Ok(next) = drv.service(now) else {
            return false;
        };
        drain(drv, now, specs, &bands, checker, true);
        let d = next.since(clock.now());
        if d > 0 && drv.phase() == coilwise_driver::Phase::Running {
            clock.delay_us(d as u32);
        }
    }
    drv.phase() == coilwise_driver::Phase::Ready
}

/// The healthy comparator band of every channel, ms (for the log).
fn bands<Sw, Pwm, Sense>(drv: &Drv<'_, Sw, Pwm, Sense>) -> [(f32, f32); CHANNELS]
where
    Sense: CurrentSense,
{
    core::array::from_fn(|i| {
        drv.sense_setup(i)
            .and_then(|s| s.band)
            .map_or((0.0, 0.0), |b| {
                (b.time.min.value() * 1e3, b.time.max.value() * 1e3)
            })
    })
}
