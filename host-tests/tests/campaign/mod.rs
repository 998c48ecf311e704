//! The field campaign's pieces: two invented coils, the phenomena of a real coil and converter
//! drawn on the simulator (`coilwise_host_tests`, not the core's closed forms), the three modes of
//! knowledge, and the confusion matrices.
#![allow(dead_code)]

mod full_rise;
mod sensor;
pub use full_rise::{FullRise, SPAN_TAU};
pub use sensor::{SensorFault, SENSOR_FAULTS};

use coilwise::diagnosis::{fit_response, FitPath};
use coilwise::diagnosis::{
    judge_baseline, judge_trace, Conditions, Criteria, Expected, FitOptions, Learning, Probe,
    Sampling, SupplyReading,
};
use coilwise::{
    Amps, Celsius, Circuit, Clamp, Coil, DriverDesign, Finding, Henries, Ohms, Seconds,
    SupplyRange, Switch, TemperatureRange, TickRate, Tolerances, Topology, Volts,
};
use coilwise_host_tests as sim;
use sim::{AdcConfig, Bench, CoupledLoop, Fault, Magnetics, Prng, Rig, Saturation, SolverSettings};

/// IEC 60028 annealed copper at 20 °C (the core's default coefficient).
pub const ALPHA: f64 = 0.00393;
/// Wiring, sense and MOSFET on-resistance of both invented channels, Ω.
const WIRING: f64 = 0.4;
const SENSE: f64 = 0.5;
const RDS: f64 = 0.05;

/// An invented coil with its channel.
#[derive(Clone, Copy, Debug)]
pub struct CoilSpec {
    pub name: &'static str,
    pub volts: f64,
    pub r_ref: f64,
    pub l: f64,
    pub must_operate: f64,
    /// Converter full scale, A.
    pub full_scale: f64,
}

/// Slow: the greenhouse 24 V valve (τ ≈ 1.6 ms). Invented.
pub const VALVE: CoilSpec = CoilSpec {
    name: "24 V valve (slow, tau 1.6 ms)",
    volts: 24.0,
    r_ref: 180.0,
    l: 0.30,
    must_operate: 15.0,
    full_scale: 0.1,
};

/// Fast: a 12 V signal relay (τ ≈ 0.25 ms). Invented.
pub const RELAY: CoilSpec = CoilSpec {
    name: "12 V relay (fast, tau 0.25 ms)",
    volts: 12.0,
    r_ref: 120.0,
    l: 0.030,
    must_operate: 8.0,
    full_scale: 0.08,
};

/// The design file of a coil: supply ±10 %, winding −20…85 °C, R ±7 %, L ±15 %, sense ±1 %.
pub fn design(c: &CoilSpec) -> DriverDesign {
    let coil = Coil::new(
        Ohms::new(c.r_ref as f32),
        Celsius::new(20.0),
        Henries::new(c.l as f32),
        Henries::new((1.5 * c.l) as f32),
        Volts::new(c.must_operate as f32),
        Volts::new((0.15 * c.volts) as f32),
    )
    .unwrap();
    let circuit = Circuit::new(
        coil,
        Switch::Mosfet {
            on_resistance: Ohms::new(RDS as f32),
            breakdown: Volts::new(68.0),
        },
        Topology::LowSide,
        Ohms::new(SENSE as f32),
        Ohms::new(WIRING as f32),
        Clamp::diode(Volts::new(0.8)).unwrap(),
    )
    .unwrap();
    let mut d = DriverDesign::new(
        circuit,
        SupplyRange::with_tolerance(Volts::new(c.volts as f32), 0.1).unwrap(),
        TemperatureRange::new(Celsius::new(-20.0), Celsius::new(85.0)).unwrap(),
        TickRate::new(10_000_000).unwrap(),
    );
    d.tolerances = Tolerances {
        resistance: 0.07,
        inductance: 0.15,
        sense: 0.01,
    };
    d.operate_allowance = Seconds::from_millis(8.0);
    d
}

/// What is added to the ideal coil and converter.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Phenomenon {
    Ideal,
    /// Eddy loop taking 0.5–5 % of the current, fast time constant 3–20 % of τ.
    Eddy,
    /// Inductance down by up to 25 % at full current.
    Saturation,
    /// Up to 10 % of the final current at switch-on.
    Initial,
    /// Offset −4…+4 counts (clipped at 0), gain ±1 %, noise 1–2 counts.
    Converter,
    /// Sampling starting up to one sample period late.
    Latency,
    /// All of the above.
    All,
}

pub const PHENOMENA: [Phenomenon; 7] = [
    Phenomenon::Ideal,
    Phenomenon::Eddy,
    Phenomenon::Saturation,
    Phenomenon::Initial,
    Phenomenon::Converter,
    Phenomenon::Latency,
    Phenomenon::All,
];

impl Phenomenon {
    pub fn label(&self) -> &'static str {
        match self {
            Phenomenon::Ideal => "ideal",
            Phenomenon::Eddy => "eddy loop",
            Phenomenon::Saturation => "saturation",
            Phenomenon::Initial => "initial current",
            Phenomenon::Converter => "converter errors",
            Phenomenon::Latency => "start latency",
            Phenomenon::All => "all together",
        }
    }
    fn has(&self, p: Phenomenon) -> bool {
        *self == p || *self == Phenomenon::All
    }
}

/// The coil's true state.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Truth {
    Healthy,
    Open,
    Short,
    ShortedTurns(f64),
    SeriesR(f64),
    SupplyLow,
    /// A healthy coil whose current sensor has failed.
    Sensor(SensorFault),
}

impl Truth {
    pub fn label(&self) -> String {
        match self {
            Truth::Healthy => "healthy".into(),
            Truth::Open => "open".into(),
            Truth::Short => "short".into(),
            Truth::ShortedTurns(f) => format!("sh.turns {:.0}%", f * 100.0),
            Truth::SeriesR(x) => format!("R +{:.0}%", x * 100.0),
            Truth::SupplyLow => "supply 85% min".into(),
            Truth::Sensor(s) => s.label(),
        }
    }
    pub fn right(&self, f: &Finding) -> bool {
        match self {
            Truth::Healthy => *f == Finding::Healthy,
            Truth::Open => *f == Finding::OpenCircuit,
            Truth::Short => *f == Finding::ShortCircuit,
            Truth::ShortedTurns(_) => *f == Finding::ShortedTurns,
            Truth::SeriesR(_) => *f == Finding::HighResistance,
            Truth::SupplyLow => *f == Finding::SupplyLow,
            // A sensor that reads zero throughout is, to the trace, an open circuit (no current
            // flows through an open winding either); that name sends the technician to the
            // channel, where the open sensor is found. It counts as right here.
            Truth::Sensor(SensorFault::StuckZero) => matches!(
                f,
                Finding::SensorImplausible(_) | Finding::CannotTell(_) | Finding::OpenCircuit
            ),
            Truth::Sensor(_) => {
                matches!(f, Finding::SensorImplausible(_) | Finding::CannotTell(_))
            }
        }
    }
}

/// One coil as drawn: its part values and eddy/saturation (fixed for the part), and its board's
/// converter errors.
#[derive(Clone, Copy, Debug)]
pub struct Part {
    k_r: f64,
    k_l: f64,
    k_s: f64,
    eddy: Option<(f64, f64)>,
    saturation: Option<f64>,
    offset: f64,
    gain: f64,
    noise: f64,
}

/// One pulse's conditions.
#[derive(Clone, Copy, Debug)]
pub struct Moment {
    pub temperature: f64,
    pub supply: f64,
    initial: f64,
}

/// `eddy_max`: the largest share of the current the eddy path's fast mode takes (0.05 for a
/// solid magnetic circuit, 0.02 for a coil declared laminated).
pub fn draw_part(rng: &mut Prng, ph: Phenomenon, eddy_max: f64) -> Part {
    let mut u = |lo: f64, hi: f64| lo + (hi - lo) * rng.uniform();
    Part {
        k_r: u(0.93, 1.07),
        k_l: u(0.85, 1.15),
        k_s: u(0.99, 1.01),
        eddy: if ph.has(Phenomenon::Eddy) {
            Some((u(0.005, eddy_max), u(0.03, 0.20)))
        } else {
            None
        },
        saturation: if ph.has(Phenomenon::Saturation) {
            Some(u(0.0, 0.25))
        } else {
            None
        },
        offset: if ph.has(Phenomenon::Converter) {
            u(-4.0, 4.0)
        } else {
            0.0
        },
        gain: if ph.has(Phenomenon::Converter) {
            u(-0.01, 0.01)
        } else {
            0.0
        },
        noise: if ph.has(Phenomenon::Converter) {
            u(1.0, 2.0)
        } else {
            1.0
        },
    }
}

pub fn draw_moment(rng: &mut Prng, c: &CoilSpec, ph: Phenomenon) -> Moment {
    let mut u = |lo: f64, hi: f64| lo + (hi - lo) * rng.uniform();
    Moment {
        temperature: u(-20.0, 85.0),
        supply: u(0.9, 1.1) * c.volts,
        initial: if ph.has(Phenomenon::Initial) {
            u(0.0, 0.10)
        } else {
            0.0
        },
    }
}

/// The probe channel of a coil: pulse, sampling as the firmware states it (noise: the
/// converter's rated 2 counts), sample period in ns.
pub struct Channel {
    pub spec: CoilSpec,
    pub design: DriverDesign,
    pub probe: Probe,
    pub sampling: Sampling,
    pub period_ns: u64,
    pub wide: Expected,
    /// What the design declares about its magnetic circuit.
    pub criteria: Criteria,
    /// Largest eddy share the parts of this design are drawn with.
    pub eddy_max: f64,
}

pub const SAMPLES: usize = 64;

/// The fit options of every campaign: the refinement's arithmetic from `COILWISE_FIT_PATH`
/// (`float` or `counts`; unset: `FitPath::Auto`, which is the float path on the host), so that
/// the matrices can be compared between the paths.
pub fn fit_options() -> FitOptions {
    let path = match std::env::var("COILWISE_FIT_PATH").as_deref() {
        Ok("counts") => FitPath::Counts,
        Ok("float") => FitPath::Float,
        _ => FitPath::Auto,
    };
    FitOptions::default().with_path(path)
}

impl Channel {
    /// A coil with a solid magnetic circuit (eddy path up to 5 % of the current), judged with
    /// the conservative default criteria.
    pub fn new(spec: CoilSpec) -> Self {
        Self::declared(spec, Criteria::default(), 0.05)
    }

    /// A coil whose design declares a laminated magnetic circuit (eddy path up to 2 % of the
    /// current), judged with [`Criteria::laminated`].
    pub fn laminated(spec: CoilSpec) -> Self {
        Self::declared(spec, Criteria::laminated(), 0.02)
    }

    fn declared(spec: CoilSpec, criteria: Criteria, eddy_max: f64) -> Self {
        let design = design(&spec);
        let probe = Probe::new(&design, 0.5).unwrap();
        let dt = probe.sample_period(SAMPLES).unwrap();
        let period_ns = (dt.value() as f64 * 1e9).floor() as u64;
        let dt = Seconds::new(period_ns as f32 * 1e-9);
        // The simulated converter maps full_scale to 2¹² counts.
        let top = (spec.full_scale * 4095.0 / 4096.0) as f32;
        let sampling = Sampling::adc(dt, 12, Amps::new(top))
            .unwrap()
            .with_noise(2.0)
            .unwrap();
        let wide = Expected::new(&design, &Conditions::default()).unwrap();
        Channel {
            spec,
            design,
            probe,
            sampling,
            period_ns,
            wide,
            criteria,
            eddy_max,
        }
    }

    /// Runs one probe pulse on the simulator and returns the counts.
    pub fn pulse(
        &self,
        part: &Part,
        at: &Moment,
        truth: Truth,
        latency: bool,
        rng: &mut Prng,
    ) -> Vec<u16> {
        let c = &self.spec;
        let r_w = c.r_ref * part.k_r * (1.0 + ALPHA * (at.temperature - 20.0));
        let l = c.l * part.k_l;
        let mut params = sim::demo::valve_24v();
        params.coil = sim::Coil::fixed(r_w, l, WIRING);
        params.mechanics = sim::Mechanics::Fixed { position: 0.0 };
        params.switch = sim::Switch::Mosfet {
            on_ohms: RDS,
            breakdown_volts: 68.0,
            avalanche_ohms: 0.2,
            body_diode_volts: 0.7,
        };
        params.sense_ohms = SENSE * part.k_s;
        let supply = if truth == Truth::SupplyLow {
            0.85 * 0.9 * c.volts
        } else {
            at.supply
        };
        let r_on = r_w + WIRING + SENSE * part.k_s + RDS;
        let i_inf = supply / r_on;
        let tau = l / r_on;
        let mut b = Bench::single(
            sim::Supply::ideal(supply),
            params,
            SolverSettings::with_max_step((self.period_ns as f64 * 1e-9).min(tau / 50.0)),
        )
        .unwrap();
        let mag = Magnetics {
            eddy: part.eddy.map(|(x, r)| {
                // An eddy path whose fast mode takes ≈ x of the current with a time constant
                // r·τ: coupling k² = x/(r + x), loop time constant r·τ/(1 − k²).
                let k2 = x / (r + x);
                let tau_e = r * tau / (1.0 - k2);
                let l_e = 0.02 * l;
                CoupledLoop {
                    ohms: l_e / tau_e,
                    henries: l_e,
                    coupling: k2.sqrt(),
                }
            }),
            saturation: part
                .saturation
                .map(|d| Saturation::dropping(d, c.volts / (c.r_ref + 1.0))),
        };
        b.set_magnetics(0, mag).unwrap();
        match truth {
            Truth::Open => b.inject(0, Fault::Open).unwrap(),
            Truth::Short => b
                .inject(
                    0,
                    Fault::Short {
                        residual_ohms: 0.2,
                        residual_henries: 2e-6,
                    },
                )
                .unwrap(),
            Truth::ShortedTurns(f) => {
                let mut u = |lo: f64, hi: f64| lo + (hi - lo) * rng.uniform();
                let coupling = u(0.6, 0.99);
                // Bridge resistance log-uniform over 0.05…5 Ω.
                let bridge = 0.05 * (100.0f64).powf(u(0.0, 1.0));
                b.inject(
                    0,
                    Fault::ShortedTurns {
                        fraction: f,
                        coupling,
                        bridge_ohms: bridge,
                    },
                )
                .unwrap()
            }
            Truth::SeriesR(x) => b
                .inject(0, Fault::SeriesResistance { ohms: x * c.r_ref })
                .unwrap(),
            _ => {}
        }
        if at.initial > 0.0 && truth != Truth::Open {
            b.set_current(0, at.initial * i_inf).unwrap();
        }
        let rig = Rig::new(b);
        rig.bench_mut().set_gate(0, true).unwrap();
        let delay = if latency { self.period_ns } else { 0 };
        let cfg = AdcConfig::new(c.full_scale)
            .with_errors(
                part.offset,
                (1.0 + part.gain) * part.k_s - 1.0,
                part.noise,
                rng.next_u64(),
            )
            .with_start_delay(0, delay);
        let mut adc = rig.adc(0, cfg).unwrap();
        let mut buf = vec![0u16; SAMPLES];
        adc.capture(&mut buf, self.period_ns);
        buf
    }

    /// Mode B/C knowledge: the supply reading (±1 %) and a winding window from a board reading
    /// up to ±4 K off (±5 K window); returns the narrowed bands and the board reading.
    pub fn knowledge(&self, at: &Moment, truth: Truth, rng: &mut Prng) -> (Expected, Celsius) {
        let supply = if truth == Truth::SupplyLow {
            0.85 * 0.9 * self.spec.volts
        } else {
            at.supply
        };
        let reading = supply * (1.0 + 0.0095 * (2.0 * rng.uniform() - 1.0));
        let board = at.temperature + 4.0 * (2.0 * rng.uniform() - 1.0);
        let cond = Conditions {
            supply: Some(SupplyReading::new(Volts::new(reading as f32), 0.01).unwrap()),
            winding_temperature: Some(
                TemperatureRange::new(
                    Celsius::new((board - 5.0) as f32),
                    Celsius::new((board + 5.0) as f32),
                )
                .unwrap(),
            ),
        };
        (
            Expected::new(&self.design, &cond).unwrap(),
            Celsius::new(board as f32),
        )
    }

    fn judge_samples(&self, counts: &[u16], e: &Expected) -> Finding {
        self.probe
            .judge(counts, &self.sampling, e, &self.criteria, &fit_options())
            .finding
    }

    /// The three verdicts for one coil: (A) design ranges, (B) supply and temperature known,
    /// (C) against a baseline learned at commissioning over 4 healthy pulses.
    pub fn verdicts(&self, ph: Phenomenon, truth: Truth, rng: &mut Prng) -> [Finding; 3] {
        let part = draw_part(rng, ph, self.eddy_max);
        let lat = ph.has(Phenomenon::Latency);
        // Commissioning: the healthy coil at some temperature and supply.
        let commissioning = draw_moment(rng, &self.spec, ph);
        let (e0, board0) = self.knowledge(&commissioning, Truth::Healthy, rng);
        let mut learn = Learning::new();
        let crit = self.criteria;
        let mut refused = None;
        for _ in 0..4 {
            let c = self.pulse(&part, &commissioning, Truth::Healthy, lat, rng);
            match fit_response(&c, &self.sampling, &fit_options()) {
                Ok(f) => {
                    learn.add(&f, &e0, Some(board0), &crit);
                }
                Err(_) => {
                    // A trace the fit refuses is never learned: its design verdict stands.
                    let v = judge_trace(&c, &self.sampling, &e0, &crit, &fit_options());
                    refused.get_or_insert(v.finding);
                }
            }
        }
        let baseline = match refused {
            Some(f) => Err(coilwise::diagnosis::LearnError::Refused(f)),
            None => learn.finish(4),
        };
        // Later: the pulse under test.
        let now = draw_moment(rng, &self.spec, ph);
        let mut counts = self.pulse(&part, &now, truth, lat, rng);
        // A sensor that fails after commissioning: the baseline was learned on good traces.
        if let Truth::Sensor(s) = truth {
            s.apply(&mut counts, rng);
        }
        let a = self.judge_samples(&counts, &self.wide);
        let (e1, board1) = self.knowledge(&now, truth, rng);
        let b = self.judge_samples(&counts, &e1);
        // No baseline (commissioning refused the coil): on a healthy coil that refusal is the
        // alarm the user sees; a fault that appears later is judged on the design bands (B).
        let c = match baseline {
            Err(coilwise::diagnosis::LearnError::Refused(f)) if truth == Truth::Healthy => f,
            Err(_) => b,
            Ok(base) => match fit_response(&counts, &self.sampling, &fit_options()) {
                Ok(f) => judge_baseline(&f, &base, &e1, Some(board1), &crit).finding,
                Err(_) => b,
            },
        };
        [a, b, c]
    }
}

/// Columns of the confusion matrix.
pub const COLUMNS: [&str; 11] = [
    "healthy", "open", "short", "sh.turns", "high R", "supply", "L high", "shape", "sensor",
    "can't", "other",
];

pub fn column(f: &Finding) -> usize {
    match f {
        Finding::Healthy => 0,
        Finding::OpenCircuit => 1,
        Finding::ShortCircuit => 2,
        Finding::ShortedTurns => 3,
        Finding::HighResistance => 4,
        Finding::SupplyLow => 5,
        Finding::InductanceHigh => 6,
        Finding::ShapeUnexplained => 7,
        Finding::SensorImplausible(_) => 8,
        Finding::CannotTell(_) => 9,
        _ => 10,
    }
}

#[derive(Default, Clone, Debug)]
pub struct Row {
    pub counts: [usize; 11],
    pub total: usize,
    pub right: usize,
}

impl Row {
    pub fn add(&mut self, truth: Truth, f: &Finding) {
        self.counts[column(f)] += 1;
        self.total += 1;
        self.right += truth.right(f) as usize;
    }
    pub fn rate(&self, n: usize) -> f64 {
        n as f64 / self.total.max(1) as f64
    }
    /// Healthy coils: any named fault or sensor finding (not healthy, not "cannot tell", not
    /// "shape unexplained", which firmware does not act on alone).
    pub fn false_alarms(&self) -> usize {
        self.total - self.counts[0] - self.counts[7] - self.counts[9]
    }
    /// "Cannot tell" and "shape unexplained": no verdict on the coil.
    pub fn cannot_tell(&self) -> usize {
        self.counts[7] + self.counts[9]
    }
    /// Any coil-fault finding (named fault of coil, wiring or supply).
    pub fn coil_faults(&self) -> usize {
        (1..=6).map(|k| self.counts[k]).sum()
    }
}

pub fn print_matrix(title: &str, rows: &[(String, Row)]) {
    println!("\n{title}");
    print!("{:<34}{:>6}", "phenomenon / truth \\ verdict", "n");
    for c in COLUMNS {
        print!("{c:>9}");
    }
    println!("{:>8}", "right%");
    for (t, r) in rows {
        print!("{t:<34}{:>6}", r.total);
        for c in r.counts {
            print!("{c:>9}");
        }
        println!("{:>8.2}", 100.0 * r.rate(r.right));
    }
}
