//! Writing outputs all-or-nothing: to a temporary file beside the target, then renamed over it,
//! so an interrupted or failed run never leaves a half-written file.

use std::io::Write as _;
use std::path::Path;

use crate::error::ToolError;

/// Writes `contents` to `path` atomically (same-directory temporary file + rename), or to standard
/// output when `path` is `None` or `-`.
///
/// # Errors
/// [`crate::ErrorClass::Io`] naming the file; the temporary file is removed on failure.
pub fn write(path: Option<&Path>, contents: &[u8]) -> Result<(), ToolError> {
    let Some(path) = path.filter(|p| p.as_os_str() != "-") else {
        let mut out = std::io::stdout().lock();
        return out
            .write_all(contents)
            .and_then(|()| out.flush())
            .map_err(|e| ToolError::io("standard output", "write to", &e));
    };
    let shown = path.display().to_string();
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => std::path::PathBuf::from("."),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "output".to_string());
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| -> std::io::Result<()> {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(contents)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    result.map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        ToolError::io(&shown, "write", &e)
    })
}
