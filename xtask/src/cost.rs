//! `cargo xtask cost`: instructions and stack per call on the device, flash as linked, checked
//! against `firmware-example/cost-budget.toml` and written to `docs/performance.md`.
//!
//! Sources of each figure:
//! - `insns.<case>` / `stack.<case>`: the `cost` firmware binary, one `cost <case> insns <n>
//!   stack <bytes>` log line per measured call (QEMU with a fixed `-icount`; see
//!   firmware-example/src/measure.rs);
//! - `stack_app_bytes`: the main firmware's `application stack above the hardware seam: ~<bytes>`
//!   line: initial stack pointer minus the lowest stack pointer seen on entry to a board seam
//!   method (the application's depth without the simulated plant; seam frames not included);
//! - `stack_startup_bytes`: the main firmware's `start-up stack, reset to the driver built: ~<bytes>`
//!   line: the high-water mark of the stack painted again once the simulated plant is built,
//!   read once the driver is built and before commissioning first reaches the hardware (the
//!   start-up chain's depth, frames live at the repainting included);
//! - `stack_peak_bytes`: the main firmware's own high-water mark line
//!   (`stack high-water mark: ~<bytes> bytes`), whole run;
//! - `firmware_flash_bytes`: `.vector_table + .text + .rodata + .data` of the main firmware ELF
//!   (`arm-none-eabi-size -A`);
//! - `core_flash_bytes`: sizes of the text and read-only symbols whose demangled name belongs to
//!   the `coilwise` crate, in the main firmware ELF (`arm-none-eabi-nm -S -C --size-sort`). Code of
//!   the core that LTO inlined into a caller outside the crate is not counted;
//! - `driver_flash_bytes`: the same for the `coilwise_driver` crate (the runtime library, its
//!   generic code as instantiated for the QEMU board);
//! - `core_flash_min_bytes` / `core_flash_fit_bytes`: `coilwise` symbols as above in the minimal
//!   firmwares `min_comparator` (tick constants + comparator verdict + scheduler) and `min_fit`
//!   (the same plus the sample fit), built with their own features (firmware-example/src/minimal);
//!   each must run under QEMU and exit 0 (its results checked) before it is counted;
//! - `core_inlined_bytes`, `core_inlined_min_bytes`, `core_inlined_fit_bytes`: core code that
//!   LTO inlined into other crates' functions in the same three ELFs, which the symbol sums miss
//!   (DWARF line table, `arm-none-eabi-objdump --dwarf=decodedline`; see `inlined.rs`).

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::fs;
use std::process::{Command, ExitCode};

use crate::boards::{self, Board};
use crate::firmware;
use crate::tools;

/// One measured figure.
#[derive(Clone, Debug, PartialEq)]
struct Figure {
    key: String,
    what: String,
    value: u64,
    unit: &'static str,
}

/// Budgets and goals of one target: `key → limit`.
#[derive(Default, Debug)]
struct Limits {
    budget: BTreeMap<String, u64>,
    goal: BTreeMap<String, u64>,
}

const BUDGET_FILE: &str = "firmware-example/cost-budget.toml";
const DOC_FILE: &str = "docs/performance.md";

pub fn run(check: bool, write: bool) -> Result<ExitCode, String> {
    let ci = boards::ci_boards();
    for b in &ci {
        tools::ensure_target(b.triple)?;
    }
    tools::ensure_qemu_and_binutils()?;
    let mut measured: Vec<(&Board, Vec<Figure>)> = Vec::new();
    for b in &ci {
        measured.push((b, measure(b)?));
    }
    let root = firmware::repo_root();
    let budget_text = fs::read_to_string(root.join(BUDGET_FILE))
        .map_err(|e| format!("read {BUDGET_FILE}: {e}"))?;
    let limits = parse_budget(&budget_text)?;

    let mut failures = Vec::new();
    let mut notes = Vec::new();
    for (b, figs) in &measured {
        let empty = Limits::default();
        let lim = limits.get(b.key).unwrap_or(&empty);
        for f in figs {
            match lim.budget.get(&f.key) {
                Some(&max) if f.value > max => failures.push(format!(
                    "{}: {} = {} {} exceeds its budget {}",
                    b.key, f.key, f.value, f.unit, max
                )),
                Some(_) => {}
                None => notes.push(format!("{}: {} has no budget", b.key, f.key)),
            }
            if let Some(&g) = lim.goal.get(&f.key) {
                if f.value > g {
                    notes.push(format!(
                        "{}: {} = {} {} misses its goal {}",
                        b.key, f.key, f.value, f.unit, g
                    ));
                }
            }
        }
        for k in lim.budget.keys() {
            if !figs.iter().any(|f| &f.key == k) {
                failures.push(format!(
                    "{}: budget for `{k}` but nothing measured it (renamed or removed?)",
                    b.key
                ));
            }
        }
    }

    let table = render(&measured, &limits);
    if write {
        let doc = document(&table);
        let path = root.join(DOC_FILE);
        if let Some(dir) = path.parent() {
            fs::create_dir_all(dir).map_err(|e| format!("create {}: {e}", dir.display()))?;
        }
        fs::write(&path, doc).map_err(|e| format!("write {DOC_FILE}: {e}"))?;
        eprintln!("xtask: wrote {DOC_FILE}");
    } else {
        print!("{table}");
    }
    for n in &notes {
        eprintln!("xtask: note: {n}");
    }
    if check {
        if failures.is_empty() {
            println!("cost check: every figure within its budget ({BUDGET_FILE})");
        } else {
            for f in &failures {
                println!("cost check FAILED: {f}");
            }
            return Ok(ExitCode::FAILURE);
        }
    }
    Ok(ExitCode::SUCCESS)
}

/// Builds and runs both binaries for `b` and collects every figure.
fn measure(b: &Board) -> Result<Vec<Figure>, String> {
    firmware::build(b)?;
    let mut figs = Vec::new();

    let cost = firmware::run(b, firmware::COST_BIN, true)?;
    if cost.status != 0 {
        return Err(format!(
            "cost firmware for {} exited with status {} — {}\n{}",
            b.triple,
            cost.status,
            firmware::describe_status(cost.status),
            cost.log
        ));
    }
    figs.extend(parse_cost_log(&cost.log)?);
    if !cost.log.lines().any(|l| l.ends_with("cost done")) {
        return Err(format!(
            "cost log for {} is incomplete:\n{}",
            b.triple, cost.log
        ));
    }

    let main = firmware::run(b, firmware::MAIN_BIN, true)?;
    if main.status != 0 {
        return Err(format!(
            "firmware for {} exited with status {} — {}",
            b.triple,
            main.status,
            firmware::describe_status(main.status)
        ));
    }
    let app = parse_marked_number(&main.log, "application stack above the hardware seam: ~")
        .ok_or("the firmware log has no `application stack above the hardware seam: ~N` line")?;
    figs.push(Figure {
        key: "stack_app_bytes".into(),
        what: "stack of the application above the hardware seam (deepest seam call)".into(),
        value: app,
        unit: "bytes",
    });
    let startup = parse_marked_number(&main.log, "start-up stack, reset to the driver built: ~")
        .ok_or("the firmware log has no `start-up stack, reset to the driver built: ~N` line")?;
    figs.push(Figure {
        key: "stack_startup_bytes".into(),
        what: "stack of the start-up chain, reset to the driver built (designs, configurations, driver)"
            .into(),
        value: startup,
        unit: "bytes",
    });
    let peak = parse_marked_number(&main.log, "stack high-water mark: ~")
        .ok_or("the firmware log has no `stack high-water mark: ~N` line")?;
    figs.push(Figure {
        key: "stack_peak_bytes".into(),
        what: "stack high-water mark, whole firmware run (simulated plant included)".into(),
        value: peak,
        unit: "bytes",
    });

    let elf = firmware::elf_path(b, firmware::MAIN_BIN);
    let elf_s = elf.to_string_lossy().into_owned();
    let size = tool_output("arm-none-eabi-size", &["-A", &elf_s])?;
    figs.push(Figure {
        key: "firmware_flash_bytes".into(),
        what: "firmware flash (.vector_table+.text+.rodata+.data)".into(),
        value: flash_of_sections(&size),
        unit: "bytes",
    });
    let nm = tool_output("arm-none-eabi-nm", &["-S", "-C", "--size-sort", &elf_s])?;
    figs.push(Figure {
        key: "core_flash_bytes".into(),
        what: "core flash as linked (coilwise symbols, .text+.rodata)".into(),
        value: crate_symbol_bytes(&nm, "coilwise"),
        unit: "bytes",
    });
    figs.push(Figure {
        key: "core_inlined_bytes".into(),
        what: "core code inlined into the driver's and firmware's functions (line table)".into(),
        value: core_inlined(&elf_s, &nm)?,
        unit: "bytes",
    });
    figs.push(Figure {
        key: "driver_flash_bytes".into(),
        what: "driver library flash as linked (coilwise_driver symbols, .text+.rodata)".into(),
        value: crate_symbol_bytes(&nm, "coilwise_driver"),
        unit: "bytes",
    });

    firmware::build_minimal(b)?;
    for (bin, key, inlined_key, what) in [
        (
            firmware::MIN_COMPARATOR_BIN,
            "core_flash_min_bytes",
            "core_inlined_min_bytes",
            "minimal firmware: tick constants + comparator verdict + scheduler",
        ),
        (
            firmware::MIN_FIT_BIN,
            "core_flash_fit_bytes",
            "core_inlined_fit_bytes",
            "minimal firmware plus the sample fit",
        ),
    ] {
        let r = firmware::run(b, bin, true)?;
        if r.status != 0 {
            return Err(format!(
                "minimal firmware {bin} for {} exited with status {} — {}\n{}",
                b.triple,
                r.status,
                firmware::describe_status(r.status),
                r.log
            ));
        }
        let elf = firmware::elf_path(b, bin).to_string_lossy().into_owned();
        let nm = tool_output("arm-none-eabi-nm", &["-S", "-C", "--size-sort", &elf])?;
        figs.push(Figure {
            key: key.into(),
            what: format!("core flash (coilwise symbols), {what}"),
            value: crate_symbol_bytes(&nm, "coilwise"),
            unit: "bytes",
        });
        figs.push(Figure {
            key: inlined_key.into(),
            what: format!("core code inlined into the firmware's functions, {what}"),
            value: core_inlined(&elf, &nm)?,
            unit: "bytes",
        });
    }
    Ok(figs)
}

/// Core code inlined into other crates' functions of `elf` (see `inlined.rs`); `nm` is its
/// `nm -S -C` output. Paths are remapped at build time, so the core's files are
/// `/coilwise/core/src/...` wherever the checkout is.
fn core_inlined(elf: &str, nm: &str) -> Result<u64, String> {
    let decoded = tool_output("arm-none-eabi-objdump", &["--dwarf=decodedline", elf])?;
    Ok(crate::inlined::inlined_bytes(
        &decoded,
        nm,
        "coilwise",
        "/coilwise/core/src/",
    ))
}

fn tool_output(program: &str, args: &[&str]) -> Result<String, String> {
    let out = Command::new(program)
        .args(args)
        .output()
        .map_err(|e| format!("could not start {program}: {e}"))?;
    if !out.status.success() {
        return Err(format!(
            "{program} {} failed: {}",
            args.join(" "),
            String::from_utf8_lossy(&out.stderr)
        ));
    }
    Ok(String::from_utf8_lossy(&out.stdout).into_owned())
}

/// `cost <case> insns <n> stack <bytes>` lines → figures.
fn parse_cost_log(log: &str) -> Result<Vec<Figure>, String> {
    let mut figs = Vec::new();
    for line in log.lines() {
        let Some(pos) = line.find("cost ") else {
            continue;
        };
        let (numbers, what) = match line[pos + 5..].split_once(" | ") {
            Some((n, w)) => (n, w.trim()),
            None => (&line[pos + 5..], ""),
        };
        let t: Vec<&str> = numbers.split_whitespace().collect();
        if t.len() != 5 || t[1] != "insns" || t[3] != "stack" {
            continue;
        }
        let name = t[0];
        let insns: u64 = t[2]
            .parse()
            .map_err(|_| format!("bad instruction count in `{line}`"))?;
        let stack: u64 = t[4]
            .parse()
            .map_err(|_| format!("bad stack figure in `{line}`"))?;
        figs.push(Figure {
            key: format!("insns.{name}"),
            what: format!("{what}: instructions"),
            value: insns,
            unit: "insns",
        });
        figs.push(Figure {
            key: format!("stack.{name}"),
            what: format!("{what}: stack"),
            value: stack,
            unit: "bytes",
        });
    }
    if figs.is_empty() {
        return Err(format!(
            "no `cost … insns … stack …` lines in the log:\n{log}"
        ));
    }
    Ok(figs)
}

/// The number right after `marker` on the first line containing it.
fn parse_marked_number(log: &str, marker: &str) -> Option<u64> {
    let line = log.lines().find(|l| l.contains(marker))?;
    let rest = &line[line.find(marker)? + marker.len()..];
    let digits: String = rest.chars().take_while(char::is_ascii_digit).collect();
    digits.parse().ok()
}

/// Flash bytes from `size -A` output: `.vector_table`, `.text`, `.rodata`, `.data` (initialised
/// data is stored in flash and copied to RAM at start-up).
fn flash_of_sections(size_a: &str) -> u64 {
    size_a
        .lines()
        .filter_map(|l| {
            let mut t = l.split_whitespace();
            let name = t.next()?;
            let bytes: u64 = t.next()?.parse().ok()?;
            matches!(name, ".vector_table" | ".text" | ".rodata" | ".data").then_some(bytes)
        })
        .sum()
}

/// Bytes of text (`t`/`T`) and read-only (`r`/`R`) symbols of crate `krate` in `nm -S -C`
/// output: names starting `krate::` or `<krate::` (inherent and trait impls on its types).
fn crate_symbol_bytes(nm: &str, krate: &str) -> u64 {
    let plain = format!("{krate}::");
    let impl_ = format!("<{krate}::");
    nm.lines()
        .filter_map(|l| {
            let mut t = l.splitn(4, ' ');
            let _addr = t.next()?;
            let size = u64::from_str_radix(t.next()?, 16).ok()?;
            let kind = t.next()?;
            let name = t.next()?;
            let ours = name.starts_with(&plain) || name.starts_with(&impl_);
            (ours && matches!(kind, "t" | "T" | "r" | "R")).then_some(size)
        })
        .sum()
}

/// Parses the budget file: `[<target>]` and `[<target>.goals]` sections of `key = integer`
/// lines (a small subset of TOML; `_` digit separators allowed, `#` comments).
fn parse_budget(text: &str) -> Result<BTreeMap<String, Limits>, String> {
    let mut out: BTreeMap<String, Limits> = BTreeMap::new();
    let mut section: Option<(String, bool)> = None;
    for (n, raw) in text.lines().enumerate() {
        let line = raw.split('#').next().unwrap_or("").trim();
        if line.is_empty() {
            continue;
        }
        let at = || format!("{BUDGET_FILE}:{}", n + 1);
        if let Some(name) = line.strip_prefix('[').and_then(|l| l.strip_suffix(']')) {
            let name = name.trim();
            let (target, goals) = match name.strip_suffix(".goals") {
                Some(t) => (t, true),
                None => (name, false),
            };
            if boards::find(target).is_none() {
                return Err(format!("{}: unknown target section [{name}]", at()));
            }
            section = Some((target.to_string(), goals));
            continue;
        }
        let (key, value) = line
            .split_once('=')
            .ok_or_else(|| format!("{}: expected `key = integer`", at()))?;
        let key = key.trim().trim_matches('"').to_string();
        let value: u64 = value
            .trim()
            .replace('_', "")
            .parse()
            .map_err(|_| format!("{}: `{}` is not a whole number", at(), value.trim()))?;
        let (target, goals) = section
            .as_ref()
            .ok_or_else(|| format!("{}: key outside a [target] section", at()))?;
        let lim = out.entry(target.clone()).or_default();
        let map = if *goals {
            &mut lim.goal
        } else {
            &mut lim.budget
        };
        if map.insert(key.clone(), value).is_some() {
            return Err(format!("{}: `{key}` given twice", at()));
        }
    }
    Ok(out)
}

fn thousands(v: u64) -> String {
    let s = v.to_string();
    let mut out = String::new();
    for (i, c) in s.chars().enumerate() {
        if i > 0 && (s.len() - i).is_multiple_of(3) {
            out.push(' ');
        }
        out.push(c);
    }
    out
}

fn render(measured: &[(&Board, Vec<Figure>)], limits: &BTreeMap<String, Limits>) -> String {
    let mut s = String::new();
    let empty = Limits::default();
    for (b, figs) in measured {
        let lim = limits.get(b.key).unwrap_or(&empty);
        let _ = writeln!(
            s,
            "### {} — `{}`, QEMU `{}` ({})\n",
            b.core, b.triple, b.machine, b.key
        );
        let _ = writeln!(s, "| figure | key | measured | budget (CI) | goal |");
        let _ = writeln!(s, "|---|---|---:|---:|---:|");
        for f in figs {
            let budget = lim
                .budget
                .get(&f.key)
                .map_or("—".to_string(), |v| thousands(*v));
            let goal = match lim.goal.get(&f.key) {
                Some(&g) if f.value <= g => format!("{} (met)", thousands(g)),
                Some(&g) => format!("{} (**missed**)", thousands(g)),
                None => "—".to_string(),
            };
            let _ = writeln!(
                s,
                "| {} | `{}` | {} {} | {} | {} |",
                f.what,
                f.key,
                thousands(f.value),
                f.unit,
                budget,
                goal
            );
        }
        s.push('\n');
    }
    s
}

fn first_line_of(program: &str, arg: &str) -> String {
    Command::new(program)
        .arg(arg)
        .output()
        .ok()
        .and_then(|o| {
            String::from_utf8_lossy(&o.stdout)
                .lines()
                .next()
                .map(str::to_string)
        })
        .unwrap_or_else(|| format!("{program} (version unknown)"))
}

fn document(table: &str) -> String {
    let rustc = first_line_of("rustc", "-V");
    let qemu = first_line_of("qemu-system-arm", "--version");
    format!(
        "# Cost on the device

<!-- Generated by `cargo xtask cost --write`; edit the generator (xtask/src/cost.rs), not this file. -->

Regenerate with:

```sh
cargo xtask cost --write     # measure and rewrite this file
cargo xtask cost --check     # measure and compare with firmware-example/cost-budget.toml (CI)
```

Measured with:

- {rustc}
- {qemu}
- release profile of `firmware-example` (`opt-level = \"s\"`, fat LTO, one codegen unit)

How:

- **Instructions per call**: the `cost` firmware binary runs under QEMU with `-icount shift=10`,
  where every instruction advances virtual time by 1024 ns, so SysTick deltas count instructions
  exactly and repeat from run to run. The meter calibrates itself on a block of 1024 `nop`s and
  subtracts the cost of an empty call through the same harness; before reporting, it checks
  itself on a 300-`nop` probe (must read exactly 300). Counts include everything the call
  executes (callees, soft-float helpers on the M0). They are instruction counts, not cycles: a
  real M4F with flash wait states takes more cycles than instructions.
- **Stack per call**: free RAM below the stack pointer is painted before a separate run of the
  same call, with interrupts masked; the lowest overwritten word gives its depth (checked on a
  256-byte probe). Reserved but never written slots are not seen.
- **Stack of the application** (`stack_app_bytes`): every method of the QEMU board's hardware
  seam (pins, PWM, current sense, clock and delay in `firmware-example/src/board/`) is inlined
  into its caller and first records the stack pointer, then hands over to the simulated plant out
  of line; the figure is the initial stack pointer minus the lowest one recorded. It is the
  application's depth at its deepest call into the hardware, which is what a real board (with no
  simulated plant below the seam) builds on. Not included: the seam method's own frame on the real
  board (add its driver's depth), and stack the application uses only between seam calls without
  calling the board (start-up construction from the designs, a fit, logging); the per-call
  `stack.*` figures cover the core's share of those.
- **Stack of the start-up chain** (`stack_startup_bytes`): the main firmware's high-water mark
  from reset until its driver is built: the depth of everything it builds before its loop (the
  designs, the channel configurations with their limits and bands, the design log,
  `Driver::new`). The simulated plant of the QEMU board, built first, is left out (the free RAM
  is painted again once it stands; it takes the place of a real board's hardware set-up, and its
  f64 integrator frames are not the application's); the frames live at that point count in full.
  Commissioning, which follows, is the first call into the hardware; its depth above the seam is
  in `stack_app_bytes`, and on replaying hardware in `driver_new_commission`.
- **Stack high-water mark** (`stack_peak_bytes`): the main firmware paints free RAM at entry and
  reports the lowest overwritten word at the end of its run. This is the whole run: start-up
  construction, the application, and the simulated coil plant of the QEMU board (an f64
  integrator with a step frame of about 1.4 KiB, called from inside the seam methods). It has a
  budget but no goal: a real board has no simulated plant.
- **Flash**: `arm-none-eabi-size -A` of the main firmware ELF; the core's share is the sum of the
  symbols of the `coilwise` crate in `arm-none-eabi-nm -S -C`, the driver library's the same for
  `coilwise_driver` (code that LTO inlined into callers outside the crate is not counted there).
  `core_flash_min_bytes` and `core_flash_fit_bytes` are the same sum in the minimal firmwares
  (`firmware-example/src/minimal/`: the tick constants the design tool emits, the comparator
  verdict and the scheduler; then the sample fit as well), built with only the core features they
  need (`--no-default-features --features minimal`); each runs and checks its results first.
  Because fat LTO inlines much of the core into its callers, where its symbols vanish, the
  `core_inlined_*` figures add what the DWARF line table attributes to `core/src/` inside other
  crates' functions (the driver's, the firmware's; rows without a source line not counted):
  symbols plus inlined is the core's whole share of the image.
- **The driver's `service()`** (`driver_service_*`): one valve channel on replaying hardware
  (`firmware-example/src/fake.rs`: pins that do nothing, a sense that returns a precomputed
  healthy 64-sample rise), so the figures are the library's own work: a call with nothing due,
  a call applying one on edge (arming the capture), and a call that collects and judges a
  complete rise (the fit and comparator verdicts dominate).
- **Budget** is what CI enforces (`firmware-example/cost-budget.toml`, a regression guard a little
  above the measured value); **goal** is the target the design aims at. A missed goal is reported
  but does not fail CI.

{table}"
    )
}

#[cfg(test)]
#[path = "cost_tests.rs"]
mod tests;
