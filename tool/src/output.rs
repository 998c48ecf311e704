//! The one write path for everything the tool prints or writes: standard output, output files
//! (`-o`) and error messages on standard error.
//!
//! - Standard output: every write error is returned (a closed pipe, a full disk). On Linux a
//!   standard output that was closed when the tool started (`coilwise report X >&-`) is refused
//!   as well: the Rust runtime puts `/dev/null` (opened read-write) in place of a closed
//!   descriptor, and the report would vanish with exit status 0. A deliberate `>/dev/null` opens
//!   it write-only and works as usual; a `/dev/null` opened read-write on purpose (Python's
//!   `subprocess.DEVNULL`, `1<>/dev/null`) looks exactly like a closed descriptor and is refused
//!   too (telling them apart would take code before the runtime's start-up, which is unsafe).
//! - Files: written all-or-nothing, to a temporary file beside the target that is renamed over it,
//!   so a failed run never leaves a half-written file. An existing file keeps its permissions; a
//!   read-only file is refused and left as it is; a symbolic link is written through (the file it
//!   points to is replaced, the link stays); a dangling link is refused; an existing file that is
//!   not a regular file (a device such as `/dev/null`, a named pipe) is written to directly, as a
//!   shell redirection would. A directory is refused.
//! - Standard error: [`error`] never panics; when even standard error cannot be written, the exit
//!   status (1) is all that is left to tell.

use std::fs::{self, OpenOptions};
use std::io::{ErrorKind, Write as _};
use std::path::{Path, PathBuf};

use crate::error::{ErrorClass, ToolError};

/// Writes `contents` to `path` (see the module doc), or to standard output when `path` is `None`
/// or `-`.
///
/// # Errors
/// [`ErrorClass::Io`] naming the file or standard output; a temporary file is removed on failure.
pub fn write(path: Option<&Path>, contents: &[u8]) -> Result<(), ToolError> {
    match path.filter(|p| p.as_os_str() != "-") {
        None => write_stdout(contents),
        Some(p) => write_file(p, contents),
    }
}

/// Refuses an output file that is the design file itself (`coilwise constants X.toml -o X.toml`
/// would replace the design with generated code), by the same path or through a link.
///
/// # Errors
/// [`ErrorClass::Usage`] naming both.
pub fn not_the_input(output: Option<&Path>, design: &str) -> Result<(), ToolError> {
    let Some(out) = output.filter(|p| p.as_os_str() != "-") else {
        return Ok(());
    };
    let same = match (fs::canonicalize(out), fs::canonicalize(design)) {
        (Ok(a), Ok(b)) => a == b,
        _ => false,
    };
    if same {
        return Err(ToolError::new(
            ErrorClass::Usage,
            format!(
                "-o `{}` is the design file `{design}`; it would be replaced by the output",
                out.display()
            ),
        )
        .hint("write the output to another file"));
    }
    Ok(())
}

/// Prints `err` on standard error. A write failure (a closed pipe) is ignored: the caller exits
/// with status 1 either way, and there is nowhere left to report it.
pub fn error(err: &ToolError) {
    let mut e = std::io::stderr().lock();
    let _ = writeln!(e, "{err}").and_then(|()| e.flush());
}

fn write_stdout(contents: &[u8]) -> Result<(), ToolError> {
    if stdout_was_closed() {
        return Err(ToolError::new(
            ErrorClass::Io,
            "standard output is closed; the output would be lost",
        )
        .hint("write to a file with -o FILE, or discard it with >/dev/null (write-only): a /dev/null opened read-write, as Python's subprocess.DEVNULL and `1<>/dev/null` open it, cannot be told from a closed descriptor"));
    }
    let mut out = std::io::stdout().lock();
    out.write_all(contents)
        .and_then(|()| out.flush())
        .map_err(|e| ToolError::io("standard output", "write to", &e))
}

/// Whether standard output is the read-write `/dev/null` the Rust runtime opens in place of a
/// descriptor that was closed at start (Linux; elsewhere always `false`).
fn stdout_was_closed() -> bool {
    if !cfg!(target_os = "linux") {
        return false;
    }
    let is_null = fs::read_link("/proc/self/fd/1").is_ok_and(|p| p == Path::new("/dev/null"));
    if !is_null {
        return false;
    }
    // `flags:` is octal; the access mode is its two low bits (2 = O_RDWR).
    let info = fs::read_to_string("/proc/self/fdinfo/1").unwrap_or_default();
    info.lines()
        .find_map(|l| l.strip_prefix("flags:"))
        .and_then(|f| u32::from_str_radix(f.trim(), 8).ok())
        .is_some_and(|flags| flags & 3 == 2)
}

fn write_file(path: &Path, contents: &[u8]) -> Result<(), ToolError> {
    let shown = path.display().to_string();
    let fail = |what: &str, e: &std::io::Error| ToolError::io(&shown, what, e);
    let refuse = |why: &str| {
        ToolError::new(ErrorClass::Io, format!("will not write `{shown}`: {why}"))
            .hint("choose another output file, or remove or fix this one first")
    };
    let is_link = fs::symlink_metadata(path).is_ok_and(|m| m.file_type().is_symlink());
    // `metadata` follows links: this is the file that would be replaced.
    let existing = match fs::metadata(path) {
        Ok(m) => Some(m),
        Err(e) if e.kind() == ErrorKind::NotFound && is_link => {
            return Err(refuse(
                "it is a symbolic link to a file that does not exist",
            ))
        }
        Err(e) if e.kind() == ErrorKind::NotFound => None,
        Err(e) => return Err(fail("inspect", &e)),
    };
    let Some(meta) = existing else {
        return replace(path, path, contents, None).map_err(|e| fail("write", &e));
    };
    if meta.is_dir() {
        return Err(refuse("it is a directory"));
    }
    if !meta.is_file() {
        // A device or named pipe: written in place (renaming over it would replace the device).
        return OpenOptions::new()
            .write(true)
            .open(path)
            .and_then(|mut f| f.write_all(contents).and_then(|()| f.flush()))
            .map_err(|e| fail("write", &e));
    }
    if meta.permissions().readonly() {
        return Err(refuse("it is read-only; it was left as it is"));
    }
    // Would this user be allowed to write it (opened without truncating, so nothing changes)?
    OpenOptions::new()
        .write(true)
        .open(path)
        .map_err(|e| fail("write", &e))?;
    let target = if is_link {
        fs::canonicalize(path).map_err(|e| fail("follow the symbolic link", &e))?
    } else {
        path.to_path_buf()
    };
    replace(path, &target, contents, Some(meta.permissions())).map_err(|e| fail("write", &e))
}

/// Writes `contents` to a new temporary file beside `target` and renames it over `target`,
/// with `permissions` (those of the file replaced) when given.
fn replace(
    shown: &Path,
    target: &Path,
    contents: &[u8],
    permissions: Option<fs::Permissions>,
) -> std::io::Result<()> {
    let dir = match target.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = target
        .file_name()
        .or_else(|| shown.file_name())
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "output".to_string());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    // `create_new`: never opens (or follows) something already there, and never removes it.
    let mut f = OpenOptions::new().write(true).create_new(true).open(&tmp)?;
    let result = (|| {
        f.write_all(contents)?;
        f.sync_all()?;
        if let Some(p) = permissions {
            fs::set_permissions(&tmp, p)?;
        }
        fs::rename(&tmp, target)
    })();
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
    }
    result
}
