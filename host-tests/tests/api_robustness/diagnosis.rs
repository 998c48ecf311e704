//! Families of calls into the diagnosis and the scheduler.

use super::*;

pub(crate) fn fam_diagnosis(g: &mut Gen) -> Result<(), String> {
    let Ok(d) = design(g) else { return Ok(()) };
    let conditions = Conditions {
        supply: if g.rng.chance(0.5) {
            let (v, acc) = (g.volts(24.0), g.around(0.02, 0.02));
            g.log("SupplyReading::new", &(v, acc));
            SupplyReading::new(v, acc).ok()
        } else {
            None
        },
        winding_temperature: if g.rng.chance(0.5) {
            let (lo, hi) = (g.around(20.0, 30.0), g.around(30.0, 30.0));
            TemperatureRange::new(Celsius::new(lo), Celsius::new(hi)).ok()
        } else {
            None
        },
    };
    g.log("Expected::new", &conditions);
    let expected = Expected::new(&d, &conditions);
    ok("Expected::new", &expected)?;
    let th = g.amps(0.05);
    g.log("ThresholdBand::new", &th);
    let band = ThresholdBand::new(&d, &conditions, th);
    ok("ThresholdBand::new", &band)?;
    let fraction = g.around(0.5, 0.5);
    g.log("Probe::new", &fraction);
    let probe = Probe::new(&d, fraction);
    ok("Probe::new", &probe)?;
    let Some(s) = sampling(g)? else {
        return Ok(());
    };
    let n = [0usize, 1, 2, 3, 8, 40, 200][g.rng.below(7) as usize];
    let raw = trace(g, n, 4000.0);
    let counts: Vec<u16> = raw.iter().map(|&x| x as u16).collect();
    let mut options = FitOptions::default();
    options = options.with_refinements(g.rng.below(6) as u8);
    let mut criteria = Criteria::default();
    if g.rng.chance(0.2) {
        criteria.sigmas = g.wild();
        criteria.model_margin = g.around(0.01, 0.02);
    }
    let mut movement = MovementCriteria::default();
    if g.rng.chance(0.2) {
        movement.sigmas = g.wild();
        movement.min_depth = g.wild();
    }
    g.log("fit_rise/detect_movement", &(s, n, &raw, options, movement));
    let fit_f = fit_rise(&raw, &s, &options);
    ok("fit_rise(f32)", &fit_f)?;
    let fit_u = fit_rise(&counts, &s, &options);
    ok("fit_rise(u16)", &fit_u)?;
    let m = detect_movement(&raw, &s, &movement);
    ok("detect_movement(f32)", &m)?;
    if let Ok(Movement::Moved {
        at, seated, depth, ..
    }) = m
    {
        ensure(seated >= at && depth.value() >= 0.0, || {
            format!("movement {m:?}")
        })?;
    }
    ok(
        "detect_movement(u16)",
        &detect_movement(&counts, &s, &movement),
    )?;
    let Ok(expected) = expected else {
        return Ok(());
    };
    g.log("judge_trace/judge_actuation", &criteria);
    scan(
        "judge_trace(f32)",
        &judge_trace(&raw, &s, &expected, &criteria, &options),
    )?;
    scan(
        "judge_trace(u16)",
        &judge_trace(&counts, &s, &expected, &criteria, &options),
    )?;
    scan(
        "judge_actuation(u16)",
        &judge_actuation(&counts, &s, &expected, &criteria, &options),
    )?;
    if let Ok(fit) = fit_u {
        g.log("judge_rise", &fit);
        scan("judge_rise", &judge_rise(&fit, &expected, &criteria))?;
    }
    let steady = g.amps(0.1);
    g.log("judge_steady", &steady);
    scan("judge_steady", &judge_steady(steady, &expected, &criteria))?;
    if let Ok(band) = band {
        let (on, cross, now) = (
            Instant(g.u32_any()),
            Instant(g.u32_any()),
            Instant(g.u32_any()),
        );
        let cross = g.rng.chance(0.5).then_some(cross);
        g.log("ThresholdReading::from_instants", &(on, cross, now));
        if let Ok(reading) = ThresholdReading::from_instants(d.tick_rate, on, cross, now) {
            scan("ThresholdReading", &reading)?;
            let steady = g.rng.chance(0.5).then_some(steady);
            g.log("judge_threshold", &(reading, steady));
            scan(
                "judge_threshold",
                &judge_threshold(reading, &band, steady, &expected, &criteria),
            )?;
        }
    }
    if let Ok(p) = probe {
        let k = g.rng.below(300) as usize;
        g.log("Probe::sample_period/judge", &k);
        ok("Probe::sample_period", &p.sample_period(k))?;
        scan(
            "Probe::judge",
            &p.judge(&counts, &s, &expected, &criteria, &options),
        )?;
    }
    Ok(())
}

pub(crate) fn fam_schedule(g: &mut Gen) -> Result<(), String> {
    let x = g.around(0.5, 0.6);
    g.log("HoldDuty::from_fraction", &x);
    let duty = HoldDuty::from_fraction(x);
    if let Ok(d) = duty {
        scan("HoldDuty::fraction", &d.fraction())?;
    }
    let rate = TickRate::new(1 + g.rng.below(80_000_000) as u32).unwrap();
    let p = Watts::new(g.val(1.0));
    g.log("EnergyRate::from_watts", &(p, rate));
    let _ = EnergyRate::from_watts(p, rate);
    let tc = g.secs(10.0);
    g.log("ThermalBucket::from_rating", &(p, tc, rate));
    let bucket = ThermalBucket::from_rating(p, tc, rate);
    let mut limits = [ChannelLimits::new(Ticks(10), Ticks(10)).unwrap(); 3];
    for l in limits.iter_mut() {
        let (on, off) = (Ticks(g.u32_any() % 5000), Ticks(g.u32_any() % 5000));
        g.log("ChannelLimits::new", &(on, off));
        let Ok(mut c) = ChannelLimits::new(on, off) else {
            continue;
        };
        if g.rng.chance(0.3) {
            let m = Ticks(g.u32_any() % 20_000);
            g.log("ChannelLimits::with_max_on", &m);
            c = c.with_max_on(m).unwrap_or(c);
        }
        if g.rng.chance(0.3) {
            let w = Ticks(g.u32_any() % 5000);
            g.log("ChannelLimits::with_inrush_window", &w);
            c = c.with_inrush_window(w).unwrap_or(c);
        }
        if let (true, Ok(d)) = (g.rng.chance(0.3), duty) {
            let after = Ticks(g.u32_any() % 5000);
            g.log("HoldPhase::new/with_hold", &(after, d));
            let ceiling = HoldDuty(g.u32_any() as u16);
            g.log("HoldPhase::with_ceiling", &ceiling);
            let phase = HoldPhase::new(after, d).and_then(|h| h.with_ceiling(ceiling).or(Ok(h)));
            if let Ok(h) = phase {
                c = c.with_hold(h).unwrap_or(c);
            }
        }
        if g.rng.chance(0.3) {
            let (cap, tau) = (g.u32_any(), Ticks(g.u32_any()));
            g.log("ThermalBucket::new/with_coil_heat", &(cap, tau));
            if let Ok(b) = ThermalBucket::new(cap, tau) {
                let on = EnergyRate::from_uj_per_tick(g.u32_any() as u16);
                let b = b.with_rates(on, on.scaled_by(HoldDuty(g.u32_any() as u16)));
                c = c.with_coil_heat(b).unwrap_or(c);
            }
        }
        if let (true, Ok(b)) = (g.rng.chance(0.3), bucket) {
            let pp = g.u32_any() % 100_000;
            g.log("ChannelLimits::with_clamp_heat", &pp);
            c = c.with_clamp_heat(b.with_per_pulse(pp)).unwrap_or(c);
        }
        *l = c;
    }
    let cap = g.rng.below(4) as u8;
    let start = Instant(g.u32_any());
    g.log("Scheduler::new", &(cap, start));
    let Ok(mut s) = Scheduler::<3, 8>::new(limits, cap, start) else {
        return Ok(());
    };
    let mut now = start;
    let mut edges = EdgeBuffer::<4>::new();
    for _ in 0..12 {
        now = now.after(Ticks(g.u32_any() % 3000));
        if g.rng.chance(0.05) {
            now = Instant(g.u32_any()); // also backwards
        }
        let ch = ChannelId(g.rng.below(4) as u8);
        match g.rng.below(4) {
            0 | 1 => {
                let dur = Ticks(g.u32_any() % 8000);
                let req = if g.rng.chance(0.5) {
                    Request::now(ch, dur)
                } else {
                    Request::at(ch, dur, now.after(Ticks(g.u32_any() % 4000)))
                        .within(Ticks(g.u32_any() % 4000))
                };
                g.log("Scheduler::submit", &(now, req));
                let _ = s.submit(now, req);
            }
            2 => {
                edges.clear();
                g.log("Scheduler::poll", &now);
                let _ = s.poll(now, &mut edges);
                let _ = s.next_wake();
            }
            _ => {
                g.log("Scheduler::stop", &(now, ch));
                let _ = s.stop(now, ch);
                if let Ok(d) = duty {
                    let _ = s.set_hold_duty(ch, d);
                }
                let _ = (s.heat(ch), s.pending(), s.now());
                if g.rng.chance(0.2) {
                    g.log("Scheduler::resync", &now);
                    s.resync(now);
                }
            }
        }
    }
    Ok(())
}
