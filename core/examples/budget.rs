//! Prints the full timing budget of one invented demo coil: a 24 V irrigation valve in a
//! greenhouse controller (all values invented for the demo, not from any datasheet).
//!
//! Run: `cargo run -p coilwise --example budget`

use coilwise::{
    Celsius, Circuit, Clamp, Coil, DriverDesign, Figures, Henries, Ohms, SupplyRange, Switch,
    TemperatureRange, TickRate, Tolerances, Topology, Volts,
};

fn main() {
    if let Err(e) = run() {
        eprintln!("error: {e}");
        std::process::exit(1);
    }
}

fn run() -> Result<(), coilwise::Error> {
    // Invented demo valve: 180 Ω ±7 % at 20 °C, 0.30 H released / 0.45 H operated,
    // must-operate 14.4 V, must-release 2.4 V; MOSFET low-side switch, 0.5 Ω sense resistor.
    let coil = Coil::new(
        Ohms::new(180.0),
        Celsius::new(20.0),
        Henries::new(0.30),
        Henries::new(0.45),
        Volts::new(14.4),
        Volts::new(2.4),
    )?;
    let switch = Switch::Mosfet {
        on_resistance: Ohms::new(0.08),
        breakdown: Volts::new(100.0),
    };
    let clamps = [
        ("plain diode", Clamp::diode(Volts::new(0.9))?),
        (
            "diode + 30 V zener",
            Clamp::diode_zener(Volts::new(0.9), Volts::new(30.9))?,
        ),
        (
            "diode + 150 ohm",
            Clamp::diode_resistor(Volts::new(0.9), Ohms::new(150.0))?,
        ),
    ];
    for (name, clamp) in clamps {
        let circuit = Circuit::new(
            coil,
            switch,
            Topology::LowSide,
            Ohms::new(0.5),
            Ohms::new(0.6),
            clamp,
        )?;
        let mut design = DriverDesign::new(
            circuit,
            SupplyRange::new(Volts::new(20.4), Volts::new(24.0), Volts::new(27.6))?,
            TemperatureRange::new(Celsius::new(-25.0), Celsius::new(70.0))?,
            TickRate::new(100_000)?,
        );
        design.tolerances = Tolerances {
            resistance: 0.07,
            inductance: 0.15,
            sense: 0.01,
        };
        design.operate_allowance = coilwise::Seconds::from_millis(8.0);
        design.release_allowance = coilwise::Seconds::from_millis(6.0);
        let b = design.budget()?;
        println!("== greenhouse valve (invented demo), clamp: {name}");
        println!(
            "{:<28}{:>14}{:>14}{:>14}",
            "", "nominal", "pull-in worst", "release worst"
        );
        row("final current [mA]", &b, |f| f.final_current.value() * 1e3);
        row("tau on [ms]", &b, |f| f.tau_on.as_millis());
        row("pull-in time [ms]", &b, |f| {
            f.pull_in_time.map_or(f32::NAN, |t| t.as_millis())
        });
        row("pull-in margin [%]", &b, |f| f.pull_in_margin * 100.0);
        row("release to drop-out [ms]", &b, |f| {
            f.release_time.as_millis()
        });
        row("time to zero [ms]", &b, |f| f.time_to_zero.as_millis());
        row("stored energy [mJ]", &b, |f| f.energy.stored.value() * 1e3);
        row("clamp energy [mJ]", &b, |f| f.energy.clamp.value() * 1e3);
        row("winding energy [mJ]", &b, |f| {
            f.energy.winding.value() * 1e3
        });
        row("peak switch voltage [V]", &b, |f| {
            f.peak_switch_voltage.value()
        });
        row("switch headroom [V]", &b, |f| f.switch_headroom.value());
        println!(
            "minimum on-time {:.2} ms = {} ticks, safe minimum off-time {:.2} ms = {} ticks (at {} Hz)\n",
            b.min_on_time.as_millis(),
            b.ticks.min_on.get(),
            b.min_off_time.as_millis(),
            b.ticks.min_off.get(),
            design.tick_rate.hz()
        );
    }
    println!(
        "Engineering estimates from first-order models. Coils can put high voltage on the switch\n\
         and on exposed terminals; check every figure against the component datasheets, local\n\
         electrical codes and licensed practice before relying on it."
    );
    Ok(())
}

fn row(label: &str, b: &coilwise::TimingBudget, f: impl Fn(&Figures) -> f32) {
    println!(
        "{:<28}{:>14.3}{:>14.3}{:>14.3}",
        label,
        f(&b.nominal),
        f(&b.pull_in_corner),
        f(&b.release_corner)
    );
}
