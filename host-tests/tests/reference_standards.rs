//! Checks against published standards, textbook results (from memory) and facts of the trade. The
//! source is named beside each check.

use coilwise::physics::coil::COPPER_ALPHA_20C;
use coilwise::physics::drive::recommended_base_resistor;
use coilwise::physics::heating::{temperature_by_resistance, COPPER_ZERO_RESISTANCE};
use coilwise::{
    Amps, Celsius, Circuit, Clamp, Coil, Farads, FirstOrder, Henries, Ohms, OperatingPoint, RcNode,
    Seconds, Switch, Topology, Volts,
};

fn coil(r: f32, l: f32) -> Coil {
    // Invented demo coil values.
    Coil::new(
        Ohms::new(r),
        Celsius::new(20.0),
        Henries::new(l),
        Henries::new(l),
        Volts::new(16.8),
        Volts::new(2.4),
    )
    .unwrap()
}

fn circuit(coil: Coil, clamp: Clamp, breakdown: f32) -> Circuit {
    Circuit::new(
        coil,
        Switch::Mosfet {
            on_resistance: Ohms::new(0.0),
            breakdown: Volts::new(breakdown),
        },
        Topology::LowSide,
        Ohms::new(0.0),
        Ohms::new(0.0),
        clamp,
    )
    .unwrap()
}

fn op(v: f32) -> OperatingPoint {
    OperatingPoint::new(Volts::new(v), Celsius::new(20.0))
}

#[test]
fn copper_temperature_coefficient_is_the_annealed_copper_standard() {
    // IEC 60028 annealed copper: α20 = 0.003 93 /K, zero-resistance point −234.5 °C
    // (α20 = 1/(234.5 + 20) /K).
    assert!((COPPER_ALPHA_20C.value() - 0.003_93).abs() < 1e-9);
    assert!((1.0 / (234.5f64 + 20.0) - 0.003_93).abs() < 1e-6);
    assert_eq!(COPPER_ZERO_RESISTANCE.value(), -234.5);
    // The standard's law R(T)/R(20) = (234.5 + T)/(234.5 + 20), against the core's linear law with
    // α = 0.003 93 (they differ only by 0.003 93 vs 1/254.5): within 0.02 % from −40 to +155 °C.
    let c = coil(180.0, 0.3);
    for t in (-40..=155).step_by(5) {
        let t = t as f32;
        let std = 180.0 * (234.5 + t as f64) / 254.5;
        let got = c.resistance_at(Celsius::new(t)).unwrap().value() as f64;
        assert!((got - std).abs() / std < 2e-4, "{t}: {got} vs {std}");
        // Resistance method (same law referred to 20 °C) gives the temperature back.
        let back =
            temperature_by_resistance(Ohms::new(180.0), Celsius::new(20.0), Ohms::new(std as f32))
                .unwrap()
                .value();
        assert!((back - t).abs() < 0.01, "{t}: {back}");
    }
}

#[test]
fn avalanche_energy_tends_to_the_single_pulse_uis_formula() {
    // Single-pulse unclamped inductive switching, JEDEC JESD24 family; from memory:
    // E_AS = ½·L·I²·V_BR/(V_BR − V_DD) and avalanche time t_AV = L·I/(V_BR − V_DD), both for a
    // loss-free inductor. With a winding resistance R the switch takes less, by a fraction below
    // R·I/(V_BR − V_DD) (the share the resistance takes at the start of the pulse).
    let (l, i0, v_dd, v_br) = (10e-3f64, 5.0f64, 24.0f64, 60.0f64);
    let e_as = 0.5 * l * i0 * i0 * v_br / (v_br - v_dd);
    let t_av = l * i0 / (v_br - v_dd);
    let mut last_gap = f64::MAX;
    for r in [0.05f32, 0.005, 0.0005] {
        let c = circuit(coil(r, l as f32), Clamp::Unclamped, v_br as f32);
        let rel = c.release(&op(v_dd as f32), Amps::new(i0 as f32)).unwrap();
        let e = rel.energy().unwrap().clamp.value() as f64;
        let t = rel.time_to_zero().unwrap().value() as f64;
        let bound = r as f64 * i0 / (v_br - v_dd);
        let gap = (e_as - e) / e_as;
        println!("| UIS E_AS vs core, R = {r} ohm: deficit {gap:.2e} (bound {bound:.1e}) |");
        assert!(
            gap >= -1e-5 && gap <= bound,
            "R={r}: gap {gap} bound {bound}"
        );
        assert!((t_av - t) / t_av <= bound && t <= t_av * (1.0 + 1e-5));
        assert!(gap < last_gap);
        last_gap = gap;
        // Peak: the switch holds its breakdown voltage.
        assert!((rel.peak_switch_voltage().value() as f64 - v_br).abs() < 1e-4);
    }
    assert!(last_gap < 1e-4, "low-R limit not reached: {last_gap}");
}

#[test]
fn first_order_step_table() {
    // Textbook table of a first-order step (from memory): 63.2 %, 86.5 %, 95.0 %, 98.2 %, 99.3 %
    // of the final value after 1…5 τ; half-way at τ·ln 2 = 0.693 τ.
    let f = FirstOrder::new(0.0, 1.0, Seconds::new(0.02)).unwrap();
    for (n, pct) in [(1, 63.2), (2, 86.5), (3, 95.0), (4, 98.2), (5, 99.3)] {
        let v = f.value_at(Seconds::new(0.02 * n as f32)).unwrap() * 100.0;
        assert!((v - pct).abs() < 0.05, "{n} τ: {v}");
    }
    let half = f.time_to(0.5).unwrap().value();
    assert!((half / 0.02 - 0.693).abs() < 5e-4);
    // A coil's τ = L/R: 0.3 H on 181 Ω is 1.657 ms (the definition, from memory).
    let c = circuit(
        coil(181.0, 0.3),
        Clamp::diode(Volts::new(0.7)).unwrap(),
        60.0,
    );
    let rise = c
        .energize(&op(24.0), coilwise::Armature::Released, Amps::new(0.0))
        .unwrap();
    assert!((rise.tau().value() - 0.3 / 181.0).abs() < 1e-8);
}

#[test]
fn five_tau_settles_to_under_one_percent() {
    // Common practice, no source: an RC node has settled after 5τ (to better than 1 %).
    let n = RcNode::new(Ohms::new(4_700.0), Farads::new(1e-6)).unwrap();
    let s = n.settling_time();
    let v = n
        .step(Volts::new(0.0), Volts::new(5.0))
        .unwrap()
        .value_at(s)
        .unwrap();
    assert!((5.0 - v) / 5.0 < 0.01);
    assert!((5.0 - v) / 5.0 > 0.005); // and it is the e⁻⁵ ≈ 0.67 % rule, not something tighter
}

#[test]
fn plain_diode_holds_the_switch_at_supply_plus_one_drop() {
    // Common practice, no source: with a freewheel diode the switch sees the supply plus one
    // diode drop; with a diode + zener, supply + V_Z + V_F; the zener releases faster.
    let c = circuit(
        coil(180.0, 0.45),
        Clamp::diode(Volts::new(0.7)).unwrap(),
        60.0,
    );
    let i0 = c.final_current(&op(24.0)).unwrap();
    let d = c.release(&op(24.0), i0).unwrap();
    assert!((d.peak_switch_voltage().value() - 24.7).abs() < 1e-5);
    let z = c
        .with_clamp(Clamp::diode_zener(Volts::new(0.7), Volts::new(24.7)).unwrap())
        .unwrap()
        .release(&op(24.0), i0)
        .unwrap();
    assert!((z.peak_switch_voltage().value() - 48.7).abs() < 1e-4);
    assert!(z.time_to_zero().unwrap() < d.time_to_zero().unwrap());
    // Common practice, no source: a plain diode lets the current (and the armature) hang on for
    // several L/R; a zener at ≈ the supply voltage cuts the decay to under one L/R.
    let tau = 0.45 / 180.0;
    assert!(d.time_to_zero().unwrap().value() > 3.0 * tau);
    assert!(z.time_to_zero().unwrap().value() < tau);
}

#[test]
fn forced_gain_of_ten_for_hard_saturation() {
    // Common practice, no source: datasheets specify V_CE(sat) at a forced gain I_C/I_B = 10.
    // A base resistor for overdrive k = h_FE(min)/10 therefore gives β_f = 10.
    let (ic, v, vbe, hfe) = (0.5f32, 5.0f32, 0.85f32, 100.0f32);
    let rb = recommended_base_resistor(Amps::new(ic), Volts::new(v), Volts::new(vbe), hfe, 10.0)
        .unwrap()
        .value();
    let ib = (v - vbe) / rb;
    assert!((ic / ib - 10.0).abs() < 1e-4);
}
