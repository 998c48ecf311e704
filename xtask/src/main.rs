//! Repository tasks for coilwise, run as `cargo xtask <command>` from anywhere in the repository.
//!
//! ```text
//! cargo xtask demo   [--target m4f|m0|<triple>]   build + run the example firmware under QEMU
//! cargo xtask golden [--bless] [--target ...]     compare decoded logs with firmware-example/golden/
//! cargo xtask cost   [--check | --write]          instructions, stack and flash on the targets
//! cargo xtask setup  [--target ...]               install what the above need, then stop
//! ```
//!
//! Missing tools are installed on the way: the rustup target, QEMU and ARM binutils (apt-get, when
//! running as root; otherwise the exact command is printed and the task fails) and `defmt-print`
//! (`cargo install`).

mod boards;
mod cost;
mod firmware;
mod golden;
mod inlined;
mod tools;

use std::process::ExitCode;

use boards::Board;

const USAGE: &str = "\
usage: cargo xtask <command> [options]

commands:
  demo   [--target T]              build and run the example firmware under QEMU, show the
                                   decoded log and a one-line verdict (default target: m4f)
  golden [--bless] [--target T]    run the firmware and compare its decoded log with
                                   firmware-example/golden/<triple>.log (--bless rewrites them;
                                   default: every CI target)
  cost   [--check | --write]       measure instructions and stack per call (QEMU -icount) and
                                   flash as linked; --check compares with
                                   firmware-example/cost-budget.toml, --write regenerates
                                   docs/performance.md
  setup  [--target T]              install the target, QEMU, binutils and defmt-print if missing

targets: m4f (thumbv7em-none-eabihf, QEMU mps2-an386), m0 (thumbv6m-none-eabi, QEMU microbit),
         m3 (thumbv7m-none-eabi, QEMU lm3s6965evb; not in CI), or the triple itself";

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    match run(&args) {
        Ok(code) => code,
        Err(msg) => {
            eprintln!("xtask: {msg}");
            ExitCode::FAILURE
        }
    }
}

/// Parsed command-line options shared by the subcommands.
struct Opts {
    targets: Vec<&'static Board>,
    bless: bool,
    check: bool,
    write: bool,
}

fn parse_opts(args: &[String]) -> Result<Opts, String> {
    let mut o = Opts {
        targets: Vec::new(),
        bless: false,
        check: false,
        write: false,
    };
    let mut it = args.iter();
    while let Some(a) = it.next() {
        match a.as_str() {
            "--target" | "-t" => {
                let v = it.next().ok_or("--target needs a value")?;
                o.targets
                    .push(boards::find(v).ok_or_else(|| format!("unknown target `{v}`"))?);
            }
            s if s.starts_with("--target=") => {
                let v = &s["--target=".len()..];
                o.targets
                    .push(boards::find(v).ok_or_else(|| format!("unknown target `{v}`"))?);
            }
            "--bless" => o.bless = true,
            "--check" => o.check = true,
            "--write" => o.write = true,
            other => return Err(format!("unknown option `{other}`\n\n{USAGE}")),
        }
    }
    Ok(o)
}

fn run(args: &[String]) -> Result<ExitCode, String> {
    let Some((cmd, rest)) = args.split_first() else {
        println!("{USAGE}");
        return Ok(ExitCode::from(2));
    };
    let opts = parse_opts(rest)?;
    match cmd.as_str() {
        "demo" => {
            let board = match opts.targets.as_slice() {
                [] => boards::default_demo(),
                [b] => *b,
                _ => return Err("demo runs one target at a time".into()),
            };
            firmware::demo(board)
        }
        "golden" => {
            let targets = if opts.targets.is_empty() {
                boards::ci_boards()
            } else {
                opts.targets
            };
            golden::run(&targets, opts.bless)
        }
        "cost" => {
            if opts.check && opts.write {
                return Err("--check and --write are exclusive".into());
            }
            cost::run(opts.check, opts.write)
        }
        "setup" => {
            let targets = if opts.targets.is_empty() {
                boards::ci_boards()
            } else {
                opts.targets
            };
            for b in &targets {
                tools::ensure_target(b.triple)?;
            }
            tools::ensure_qemu_and_binutils()?;
            tools::ensure_defmt_print()?;
            eprintln!("xtask: everything needed is installed");
            Ok(ExitCode::SUCCESS)
        }
        "help" | "--help" | "-h" => {
            println!("{USAGE}");
            Ok(ExitCode::SUCCESS)
        }
        other => Err(format!("unknown command `{other}`\n\n{USAGE}")),
    }
}
