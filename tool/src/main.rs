//! `coilwise`: design-time command-line tool. See `docs/tool.md`.

use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Args, Parser, Subcommand, ValueEnum};
use coilwise_tool::plot::Corner;
use coilwise_tool::{analysis::Analysis, constants, json, output, plot, quantity, report, schema};
use coilwise_tool::{ErrorClass, ToolError};

/// Timing budget, clamp stress, waveforms and firmware constants for a transistor-switched coil.
///
/// Results are engineering estimates; check them against the datasheets, local codes and
/// licensed practice.
#[derive(Parser, Debug)]
#[command(name = "coilwise", version, about, long_about = None)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Args, Debug)]
struct DesignArgs {
    /// The driver-design file (TOML; see docs/design-file.md).
    design: String,
    /// Override one value of the design file, e.g. --set supply.min="20 V" (repeatable).
    #[arg(long = "set", value_name = "KEY=VALUE")]
    set: Vec<String>,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// Print the full report: timing, energy, stress, checks, bands, clamp comparison.
    Report {
        #[command(flatten)]
        design: DesignArgs,
        /// Machine-readable output (schema: docs/json-output.md).
        #[arg(long)]
        json: bool,
        /// Write to this file instead of standard output (written whole or not at all).
        #[arg(short, long, value_name = "FILE")]
        output: Option<PathBuf>,
        /// Exit with status 3 when any check fails.
        #[arg(long)]
        strict: bool,
    },
    /// Print only the clamp comparison.
    Compare {
        #[command(flatten)]
        design: DesignArgs,
        /// Machine-readable output (the `clamp_comparison` array of the report schema).
        #[arg(long)]
        json: bool,
        /// Write to this file instead of standard output.
        #[arg(short, long, value_name = "FILE")]
        output: Option<PathBuf>,
    },
    /// Draw coil current and switch voltage through one on/off cycle, one trace per clamp (SVG).
    Plot {
        #[command(flatten)]
        design: DesignArgs,
        /// The SVG file to write.
        #[arg(short, long, value_name = "FILE.svg")]
        output: PathBuf,
        /// Operating point to draw.
        #[arg(long, value_enum, default_value_t = CornerArg::Nominal)]
        corner: CornerArg,
        /// Length of the on-phase, e.g. "20 ms" (default: the larger of 5 τ and 1.5 × pull-in).
        #[arg(long, value_name = "TIME", allow_hyphen_values = true)]
        on_time: Option<String>,
    },
    /// Emit a Rust source snippet with the timing budget as integer ticks.
    Constants {
        #[command(flatten)]
        design: DesignArgs,
        /// Write to this file instead of standard output.
        #[arg(short, long, value_name = "FILE.rs")]
        output: Option<PathBuf>,
        /// Wrap the constants in `pub mod NAME { ... }`.
        #[arg(long, value_name = "NAME")]
        module: Option<String>,
        /// Timer tick rate, e.g. "32768 Hz" (overrides timing.tick_rate).
        #[arg(long, value_name = "RATE", allow_hyphen_values = true)]
        tick_rate: Option<String>,
        /// Add the verdicts' healthy bands as f32 figures (`HEALTHY_BANDS`, for the core's
        /// `Expected::from_figures`): rise verdicts without the design computed on the device.
        #[arg(long)]
        healthy_bands: bool,
    },
    /// List every key of the design file with its unit and meaning.
    Keys,
}

#[derive(Clone, Copy, Debug, ValueEnum)]
enum CornerArg {
    Nominal,
    PullIn,
    Release,
}

/// Loads the design file with its overrides and hands its analysis to `f`.
fn analysed<T>(
    design: &str,
    set: &[String],
    f: impl FnOnce(&coilwise_tool::Spec, &Analysis) -> Result<T, ToolError>,
) -> Result<T, ToolError> {
    let spec = coilwise_tool::load(design, set)?;
    let a = Analysis::new(&spec)?;
    f(&spec, &a)
}

/// Writes `text` to `output` (standard output when `None`), never over the design file.
fn emit(output: Option<&std::path::Path>, design: &str, text: &str) -> Result<(), ToolError> {
    output::not_the_input(output, design)?;
    output::write(output, text.as_bytes())
}

fn run(cli: Cli) -> Result<ExitCode, ToolError> {
    match cli.command {
        Command::Report {
            design,
            json,
            output,
            strict,
        } => {
            let failed = analysed(&design.design, &design.set, |_, a| {
                let text = if json {
                    json::render(a)
                } else {
                    report::render_report(a)
                };
                emit(output.as_deref(), &design.design, &text)?;
                Ok(a.any_failed())
            })?;
            if strict && failed {
                return Ok(ExitCode::from(3));
            }
        }
        Command::Compare {
            design,
            json,
            output,
        } => analysed(&design.design, &design.set, |_, a| {
            let text = if json {
                json::render_comparison(a)
            } else {
                report::render_comparison(a)
            };
            emit(output.as_deref(), &design.design, &text)
        })?,
        Command::Plot {
            design,
            output,
            corner,
            on_time,
        } => {
            let on = match on_time {
                Some(t) => Some(quantity::parse(quantity::Dim::Time, &t).map_err(|e| {
                    ToolError::new(ErrorClass::Usage, format!("--on-time \"{t}\" {e}"))
                        .hint("write it like \"20 ms\"")
                })?),
                None => None,
            };
            let corner = match corner {
                CornerArg::Nominal => Corner::Nominal,
                CornerArg::PullIn => Corner::PullIn,
                CornerArg::Release => Corner::Release,
            };
            analysed(&design.design, &design.set, |spec, a| {
                let cycle = plot::cycle(a, corner, on)?;
                let svg = plot::svg(&cycle, &format!("coilwise: {}", spec.name))?;
                emit(Some(&output), &design.design, &svg)
            })?
        }
        Command::Constants {
            design,
            output,
            module,
            tick_rate,
            healthy_bands,
        } => {
            let mut set = design.set;
            if let Some(r) = tick_rate {
                set.push(format!("timing.tick_rate={r}"));
            }
            analysed(&design.design, &set, |_, a| {
                let text = constants::render(a, module.as_deref(), healthy_bands)?;
                emit(output.as_deref(), &design.design, &text)
            })?
        }
        Command::Keys => {
            output::write(None, schema::table().as_bytes())?;
        }
    }
    Ok(ExitCode::SUCCESS)
}

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        // `--help` and `--version` go through the one write path like any output; a malformed
        // command line is reported on standard error (never a panic on a closed pipe).
        Err(e) if !e.use_stderr() => {
            return match output::write(None, e.render().to_string().as_bytes()) {
                Ok(()) => ExitCode::SUCCESS,
                Err(err) => {
                    output::error(&err);
                    ExitCode::from(1)
                }
            };
        }
        Err(e) => {
            let _ = e.print();
            return ExitCode::from(2);
        }
    };
    match run(cli) {
        Ok(code) => code,
        Err(e) => {
            output::error(&e);
            ExitCode::from(1)
        }
    }
}
