//! End-to-end tests of the one write path: closed and broken standard streams, and what `-o` does
//! with a read-only file, a symbolic link, a device and a directory (docs/tool.md, "Output").

mod common;

use common::{root, run, stderr};
use std::io::Read as _;
use std::process::{Command, Stdio};

const VALVE: &str = "examples/greenhouse-valve.toml";

fn coilwise() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_coilwise"));
    c.current_dir(root());
    c
}

#[test]
fn an_error_on_a_broken_stderr_pipe_exits_1_not_101() {
    // The reading end is closed before the tool starts: its error message meets EPIPE.
    let (reader, writer) = std::io::pipe().unwrap();
    drop(reader);
    let status = coilwise()
        .args(["report", "no/such/design.toml"])
        .stdout(Stdio::null())
        .stderr(writer)
        .status()
        .unwrap();
    assert_eq!(status.code(), Some(1), "a panic exits 101");
}

#[test]
fn usage_errors_on_a_broken_stderr_pipe_do_not_panic() {
    let (reader, writer) = std::io::pipe().unwrap();
    drop(reader);
    let status = coilwise()
        .args(["report", VALVE, "--frobnicate"])
        .stderr(writer)
        .status()
        .unwrap();
    assert_eq!(status.code(), Some(2));
}

#[test]
fn a_broken_stdout_pipe_is_an_io_error() {
    for args in [vec!["report", VALVE], vec!["keys"], vec!["--help"]] {
        let (reader, writer) = std::io::pipe().unwrap();
        drop(reader);
        let o = coilwise()
            .args(&args)
            .stdout(writer)
            .stderr(Stdio::piped())
            .output()
            .unwrap();
        let err = stderr(&o);
        assert_eq!(o.status.code(), Some(1), "{args:?}: {err}");
        assert!(err.starts_with("error[io]: "), "{err}");
        assert!(err.contains("standard output"), "{err}");
    }
}

/// Runs `coilwise ARGS` through `sh` with standard output closed (`>&-`).
#[cfg(target_os = "linux")]
fn with_stdout_closed(args: &str) -> std::process::Output {
    Command::new("sh")
        .arg("-c")
        .arg(format!("exec \"$0\" {args} >&-"))
        .arg(env!("CARGO_BIN_EXE_coilwise"))
        .current_dir(root())
        .output()
        .unwrap()
}

// The closed-at-start check reads /proc (Linux only; docs/tool.md).
#[cfg(target_os = "linux")]
#[test]
fn a_closed_stdout_is_an_error_not_exit_0() {
    for args in [
        format!("report {VALVE}"),
        format!("constants {VALVE}"),
        "keys".into(),
    ] {
        let o = with_stdout_closed(&args);
        let err = stderr(&o);
        assert_eq!(o.status.code(), Some(1), "{args}: {err}");
        assert!(err.contains("standard output is closed"), "{err}");
    }
    // Discarding on purpose still works, and so does -o with standard output closed.
    let o = Command::new("sh")
        .arg("-c")
        .arg(format!("exec \"$0\" report {VALVE} >/dev/null"))
        .arg(env!("CARGO_BIN_EXE_coilwise"))
        .current_dir(root())
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r.txt");
    let o = with_stdout_closed(&format!("report {VALVE} -o {}", out.display()));
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(std::fs::read_to_string(&out).unwrap().contains("RESULT"));
}

/// A `/dev/null` opened read-write as standard output (as Python's `subprocess.DEVNULL` and the
/// shell's `1<>/dev/null` open it) is what the Rust runtime puts in place of a closed descriptor;
/// the tool cannot tell the two apart and refuses both (docs/tool.md, "Output"). The hint said
/// "discard it with >/dev/null", which reads as nonsense to a caller who did just that: it now
/// says why, and that a write-only `/dev/null` works. Opening `/dev/null` read-write here
/// changes nothing on the machine.
#[cfg(target_os = "linux")]
#[test]
fn a_read_write_dev_null_is_refused_with_a_hint_that_says_why() {
    let null = std::fs::OpenOptions::new()
        .read(true)
        .write(true)
        .open("/dev/null")
        .unwrap();
    let o = coilwise()
        .args(["report", VALVE])
        .stdout(null)
        .stderr(Stdio::piped())
        .output()
        .unwrap();
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("read-write"), "{err}");
    assert!(err.contains("subprocess.DEVNULL"), "{err}");
    // Write-only, as `Stdio::null()` and `>/dev/null` open it: works.
    let o = coilwise()
        .args(["report", VALVE])
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
}

#[cfg(target_os = "linux")]
#[test]
fn a_full_disk_is_an_error() {
    let full = std::fs::File::create("/dev/full").unwrap();
    let o = coilwise()
        .args(["report", VALVE])
        .stdout(full)
        .stderr(Stdio::piped())
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(1));
    assert!(stderr(&o).contains("standard output"));
}

#[cfg(unix)]
#[test]
fn output_onto_a_read_only_file_is_refused_and_the_file_left_alone() {
    use std::os::unix::fs::PermissionsExt as _;
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("report.txt");
    std::fs::write(&out, "kept").unwrap();
    std::fs::set_permissions(&out, std::fs::Permissions::from_mode(0o444)).unwrap();
    let o = run(&["report", VALVE, "-o", out.to_str().unwrap()]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(
        err.starts_with("error[io]: ") && err.contains("read-only"),
        "{err}"
    );
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "kept");
    let mode = std::fs::metadata(&out).unwrap().permissions().mode() & 0o777;
    assert_eq!(mode, 0o444);
    assert_eq!(
        std::fs::read_dir(dir.path()).unwrap().count(),
        1,
        "no temporary file left"
    );
}

#[cfg(unix)]
#[test]
fn replacing_a_file_keeps_its_permissions() {
    use std::os::unix::fs::PermissionsExt as _;
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("budget.rs");
    std::fs::write(&out, "old").unwrap();
    std::fs::set_permissions(&out, std::fs::Permissions::from_mode(0o600)).unwrap();
    let o = run(&["constants", VALVE, "-o", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(std::fs::read_to_string(&out)
        .unwrap()
        .contains("MIN_ON_TICKS"));
    let mode = std::fs::metadata(&out).unwrap().permissions().mode() & 0o777;
    assert_eq!(mode, 0o600, "the mode of the replaced file is kept");
}

#[cfg(unix)]
#[test]
fn output_through_a_symlink_replaces_its_target_and_keeps_the_link() {
    let dir = tempfile::tempdir().unwrap();
    let real_dir = dir.path().join("generated");
    std::fs::create_dir(&real_dir).unwrap();
    let real = real_dir.join("budget.rs");
    std::fs::write(&real, "old").unwrap();
    let link = dir.path().join("budget.rs");
    std::os::unix::fs::symlink(&real, &link).unwrap();
    let o = run(&["constants", VALVE, "-o", link.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(std::fs::symlink_metadata(&link)
        .unwrap()
        .file_type()
        .is_symlink());
    assert!(std::fs::read_to_string(&real)
        .unwrap()
        .contains("MIN_ON_TICKS"));
    // The temporary file was made beside the target, and is gone.
    assert_eq!(std::fs::read_dir(&real_dir).unwrap().count(), 1);
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 2);

    // A dangling link is refused and stays as it is.
    let dangling = dir.path().join("dangling.rs");
    std::os::unix::fs::symlink(dir.path().join("nowhere.rs"), &dangling).unwrap();
    let o = run(&["constants", VALVE, "-o", dangling.to_str().unwrap()]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("symbolic link"), "{err}");
    assert!(!dir.path().join("nowhere.rs").exists());
    assert!(std::fs::symlink_metadata(&dangling)
        .unwrap()
        .file_type()
        .is_symlink());
}

#[cfg(unix)]
#[test]
fn output_onto_a_named_pipe_writes_it_in_place_and_a_directory_is_refused() {
    // Renaming over a device or pipe would replace it (as root, `-o /dev/null` replaced the
    // device with a regular file): such a file is written to in place instead. Tested on a named
    // pipe of its own, so that a regression cannot damage the machine's /dev/null.
    let dir = tempfile::tempdir().unwrap();
    let fifo = dir.path().join("pipe");
    let made = Command::new("mkfifo").arg(&fifo).status().unwrap();
    assert!(made.success());
    let reader = {
        let fifo = fifo.clone();
        std::thread::spawn(move || std::fs::read_to_string(fifo).unwrap())
    };
    let o = run(&["report", VALVE, "-o", fifo.to_str().unwrap()]);
    assert!(o.status.success(), "{}", stderr(&o));
    // Checked before joining: had the pipe been replaced, the reader would wait forever.
    assert!(!std::fs::metadata(&fifo).unwrap().is_file(), "still a pipe");
    let read = reader.join().unwrap();
    assert!(read.contains("RESULT"), "the report went through the pipe");
    let o = run(&["report", VALVE, "-o", dir.path().to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1));
    assert!(stderr(&o).contains("directory"), "{}", stderr(&o));
}

#[test]
fn help_reaches_an_open_stdout() {
    let mut child = coilwise()
        .arg("--help")
        .stdout(Stdio::piped())
        .spawn()
        .unwrap();
    let mut text = String::new();
    child
        .stdout
        .take()
        .unwrap()
        .read_to_string(&mut text)
        .unwrap();
    assert!(child.wait().unwrap().success());
    assert!(text.contains("Usage"), "{text}");
}

#[test]
fn the_design_file_is_never_the_output() {
    let dir = tempfile::tempdir().unwrap();
    let design = dir.path().join("valve.toml");
    std::fs::copy(root().join(VALVE), &design).unwrap();
    let before = std::fs::read_to_string(&design).unwrap();
    let d = design.to_str().unwrap();
    let via_dot = dir.path().join(".").join("valve.toml");
    for args in [
        vec!["constants", d, "-o", d],
        vec!["report", d, "-o", via_dot.to_str().unwrap()],
        vec!["plot", d, "-o", d],
    ] {
        let o = run(&args);
        let err = stderr(&o);
        assert_eq!(o.status.code(), Some(1), "{args:?}: {err}");
        assert!(err.contains("is the design file"), "{err}");
    }
    #[cfg(unix)]
    {
        let link = dir.path().join("link.rs");
        std::os::unix::fs::symlink(&design, &link).unwrap();
        let o = run(&["constants", d, "-o", link.to_str().unwrap()]);
        assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    }
    assert_eq!(std::fs::read_to_string(&design).unwrap(), before);
}
