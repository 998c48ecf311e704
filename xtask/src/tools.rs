//! Finding and, where allowed, installing the external tools: rustup targets, QEMU, ARM binutils
//! and the defmt decoder.

use std::path::PathBuf;
use std::process::{Command, Stdio};
use std::sync::atomic::{AtomicBool, Ordering};

/// Version of defmt-print installed when none is present (pairs with defmt 1.x).
pub const DEFMT_PRINT_VERSION: &str = "1.2.0";

const APT_PACKAGES: [&str; 2] = ["qemu-system-arm", "binutils-arm-none-eabi"];

/// Whether `program --version` (or the given probe argument) runs at all.
fn runs(program: &str, arg: &str) -> bool {
    Command::new(program)
        .arg(arg)
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .status()
        .is_ok()
}

fn status_ok(cmd: &mut Command) -> Result<(), String> {
    let shown = format!("{cmd:?}");
    let st = cmd
        .status()
        .map_err(|e| format!("could not start {shown}: {e}"))?;
    if st.success() {
        Ok(())
    } else {
        Err(format!("{shown} failed ({st})"))
    }
}

fn is_root() -> bool {
    Command::new("id")
        .arg("-u")
        .output()
        .map(|o| String::from_utf8_lossy(&o.stdout).trim() == "0")
        .unwrap_or(false)
}

/// Adds the rustup target when it is not installed.
pub fn ensure_target(triple: &str) -> Result<(), String> {
    let out = Command::new("rustup")
        .args(["target", "list", "--installed"])
        .output();
    match out {
        Ok(o) if o.status.success() => {
            if String::from_utf8_lossy(&o.stdout)
                .lines()
                .any(|l| l.trim() == triple)
            {
                return Ok(());
            }
            eprintln!("xtask: adding rustup target {triple}");
            status_ok(Command::new("rustup").args(["target", "add", triple]))
        }
        _ => Err(format!(
            "rustup not found; install the target for your toolchain some other way \
             (rust-std for {triple})"
        )),
    }
}

static APT_UPDATED: AtomicBool = AtomicBool::new(false);

fn apt_install() -> Result<(), String> {
    let cmd = format!(
        "apt-get update && apt-get install -y --no-install-recommends {}",
        APT_PACKAGES.join(" ")
    );
    if !is_root() || !runs("apt-get", "--version") {
        return Err(format!(
            "QEMU / ARM binutils are missing, and xtask installs them only as root with apt-get; \
             run as root:\n  {cmd}"
        ));
    }
    eprintln!("xtask: installing {} with apt-get", APT_PACKAGES.join(" "));
    if !APT_UPDATED.swap(true, Ordering::SeqCst) {
        status_ok(
            Command::new("apt-get")
                .arg("update")
                .env("DEBIAN_FRONTEND", "noninteractive"),
        )?;
    }
    status_ok(
        Command::new("apt-get")
            .args(["install", "-y", "--no-install-recommends"])
            .args(APT_PACKAGES)
            .env("DEBIAN_FRONTEND", "noninteractive"),
    )
}

/// Makes sure `qemu-system-arm` is on PATH (installs QEMU and ARM binutils together).
pub fn ensure_qemu() -> Result<(), String> {
    if runs("qemu-system-arm", "--version") {
        return Ok(());
    }
    apt_install()?;
    if runs("qemu-system-arm", "--version") {
        Ok(())
    } else {
        Err("qemu-system-arm still not found after installing it".into())
    }
}

/// Makes sure QEMU and `arm-none-eabi-size` / `arm-none-eabi-nm` are on PATH.
pub fn ensure_qemu_and_binutils() -> Result<(), String> {
    if runs("qemu-system-arm", "--version") && runs("arm-none-eabi-nm", "--version") {
        return Ok(());
    }
    apt_install()?;
    if runs("qemu-system-arm", "--version") && runs("arm-none-eabi-nm", "--version") {
        Ok(())
    } else {
        Err("qemu-system-arm or arm-none-eabi-nm still not found after installing them".into())
    }
}

/// `$CARGO_HOME`, else `$HOME/.cargo`.
pub fn cargo_home() -> Option<PathBuf> {
    std::env::var_os("CARGO_HOME")
        .map(PathBuf::from)
        .or_else(|| std::env::var_os("HOME").map(|h| PathBuf::from(h).join(".cargo")))
}

fn cargo_home_bin() -> Option<PathBuf> {
    Some(cargo_home()?.join("bin"))
}

/// Path of a working `defmt-print`: on PATH, else in `$CARGO_HOME/bin`.
pub fn find_defmt_print() -> Option<PathBuf> {
    if runs("defmt-print", "--version") {
        return Some(PathBuf::from("defmt-print"));
    }
    let p = cargo_home_bin()?.join("defmt-print");
    if runs(p.to_str()?, "--version") {
        Some(p)
    } else {
        None
    }
}

/// Finds `defmt-print`, installing it with `cargo install` (about a minute) when missing.
pub fn ensure_defmt_print() -> Result<PathBuf, String> {
    if let Some(p) = find_defmt_print() {
        return Ok(p);
    }
    eprintln!(
        "xtask: installing defmt-print {DEFMT_PRINT_VERSION} (cargo install, about a minute)"
    );
    status_ok(Command::new(cargo()).args([
        "install",
        "defmt-print",
        "--version",
        DEFMT_PRINT_VERSION,
        "--locked",
    ]))?;
    find_defmt_print().ok_or_else(|| "defmt-print still not found after installing it".into())
}

/// The cargo that runs this xtask (so nested builds use the same toolchain).
pub fn cargo() -> String {
    std::env::var("CARGO").unwrap_or_else(|_| "cargo".into())
}
