//! Golden decoded logs: run the firmware, normalise its decoded log, compare with
//! `firmware-example/golden/<triple>.log`.
//!
//! Normalisation keeps the log readable while removing what a rebuild may change:
//! - trailing whitespace is trimmed, and blank lines at the end are dropped;
//! - hexadecimal numbers of five or more digits (addresses) become `0x…`;
//! - a number written right after `~` (the firmware's marker for build-dependent figures such as
//!   the stack high-water mark) becomes `~N`;
//! - the firmware's exit status is appended as a last line `[exit status N]`, so the golden file
//!   pins the verdict too.
//!
//! The log itself has no timestamps or source locations: it is decoded with the format `{L} {s}`.

use std::fs;
use std::process::ExitCode;

use crate::boards::Board;
use crate::firmware;

/// Runs every board, compares or (with `bless`) rewrites its golden file.
pub fn run(boards: &[&Board], bless: bool) -> Result<ExitCode, String> {
    for b in boards {
        crate::tools::ensure_target(b.triple)?;
    }
    crate::tools::ensure_qemu()?;
    let dir = firmware::firmware_dir().join("golden");
    let mut failed = 0;
    for b in boards {
        firmware::build(b)?;
        let r = firmware::run(b, firmware::MAIN_BIN, true)?;
        let got = normalize(&r.log, r.status);
        let path = dir.join(format!("{}.log", b.triple));
        let shown = path
            .strip_prefix(firmware::repo_root())
            .unwrap_or(&path)
            .display()
            .to_string();
        if bless {
            fs::create_dir_all(&dir).map_err(|e| format!("create {}: {e}", dir.display()))?;
            fs::write(&path, &got).map_err(|e| format!("write {shown}: {e}"))?;
            eprintln!("xtask: blessed {shown} ({} lines)", got.lines().count());
            continue;
        }
        let want = match fs::read_to_string(&path) {
            Ok(s) => s,
            Err(e) => {
                eprintln!(
                    "xtask: golden {}: cannot read {shown} ({e}); create it with \
                     `cargo xtask golden --bless`",
                    b.key
                );
                failed += 1;
                continue;
            }
        };
        let want = want.replace("\r\n", "\n");
        if want == got {
            println!("golden {} ({}): ok", b.key, b.triple);
        } else {
            println!("golden {} ({}): MISMATCH", b.key, b.triple);
            print!(
                "{}",
                unified_diff(&want, &got, &shown, "decoded log of this run")
            );
            failed += 1;
        }
    }
    if failed > 0 {
        eprintln!(
            "xtask: {failed} golden log(s) differ; if the change is intended, run \
             `cargo xtask golden --bless` and commit the files"
        );
        Ok(ExitCode::FAILURE)
    } else {
        Ok(ExitCode::SUCCESS)
    }
}

/// The normalised form of a decoded log (see the module docs).
pub fn normalize(log: &str, status: i32) -> String {
    let mut out: Vec<String> = log
        .replace("\r\n", "\n")
        .lines()
        .map(|l| mask_numbers(l.trim_end()))
        .collect();
    while out.last().is_some_and(|l| l.is_empty()) {
        out.pop();
    }
    out.push(format!("[exit status {status}]"));
    let mut s = out.join("\n");
    s.push('\n');
    s
}

fn mask_numbers(line: &str) -> String {
    let b = line.as_bytes();
    let mut out = String::with_capacity(line.len());
    let mut i = 0;
    while i < b.len() {
        // Long hexadecimal numbers: addresses.
        if b[i] == b'0' && i + 1 < b.len() && (b[i + 1] == b'x' || b[i + 1] == b'X') {
            let start = i + 2;
            let mut j = start;
            while j < b.len() && b[j].is_ascii_hexdigit() {
                j += 1;
            }
            if j - start >= 5 {
                out.push_str("0x…");
                i = j;
                continue;
            }
        }
        // `~` followed by a decimal number: build-dependent figure.
        if b[i] == b'~' && i + 1 < b.len() && b[i + 1].is_ascii_digit() {
            let mut j = i + 1;
            while j < b.len() && (b[j].is_ascii_digit() || b[j] == b'.') {
                j += 1;
            }
            out.push_str("~N");
            i = j;
            continue;
        }
        // Copy one UTF-8 character.
        let ch_len = utf8_len(b[i]);
        let end = (i + ch_len).min(b.len());
        out.push_str(&line[i..end]);
        i = end;
    }
    out
}

fn utf8_len(first: u8) -> usize {
    match first {
        0x00..=0x7F => 1,
        0xC0..=0xDF => 2,
        0xE0..=0xEF => 3,
        _ => 4,
    }
}

/// A unified diff (3 lines of context) from `old` to `new`, empty when they are equal.
pub fn unified_diff(old: &str, new: &str, old_name: &str, new_name: &str) -> String {
    let a: Vec<&str> = old.lines().collect();
    let b: Vec<&str> = new.lines().collect();
    let ops = diff_ops(&a, &b);
    if ops.iter().all(|o| matches!(o, Op::Same(..))) {
        return String::new();
    }
    const CONTEXT: usize = 3;
    let mut out = format!("--- {old_name}\n+++ {new_name}\n");
    let changes: Vec<usize> = (0..ops.len())
        .filter(|&k| !matches!(ops[k], Op::Same(..)))
        .collect();
    // Hunks: each change with CONTEXT unchanged lines either side; changes whose contexts touch
    // (at most 2·CONTEXT unchanged lines apart) share a hunk.
    let mut hunks: Vec<(usize, usize)> = Vec::new();
    for &c in &changes {
        let lo = c.saturating_sub(CONTEXT);
        let hi = (c + 1 + CONTEXT).min(ops.len());
        match hunks.last_mut() {
            Some(h) if lo <= h.1 => h.1 = hi,
            _ => hunks.push((lo, hi)),
        }
    }
    for (lo, hi) in hunks {
        let (mut a0, mut b0) = (None, None);
        let (mut na, mut nb) = (0, 0);
        let mut body = String::new();
        for op in &ops[lo..hi] {
            let (x, y) = match *op {
                Op::Same(x, y) | Op::Del(x, y) | Op::Ins(x, y) => (x, y),
            };
            a0.get_or_insert(x);
            b0.get_or_insert(y);
            match *op {
                Op::Same(..) => {
                    na += 1;
                    nb += 1;
                    body.push_str(&format!(" {}\n", a[x]));
                }
                Op::Del(..) => {
                    na += 1;
                    body.push_str(&format!("-{}\n", a[x]));
                }
                Op::Ins(..) => {
                    nb += 1;
                    body.push_str(&format!("+{}\n", b[y]));
                }
            }
        }
        // Unified format: 1-based first line; for an empty side, the line before the hunk.
        let first = |start: Option<usize>, len: usize| start.unwrap_or(0) + usize::from(len > 0);
        out.push_str(&format!(
            "@@ -{},{na} +{},{nb} @@\n{body}",
            first(a0, na),
            first(b0, nb)
        ));
    }
    out
}

/// One step of an edit script; the indices are the positions in `a` and `b` at that step.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Op {
    Same(usize, usize),
    Del(usize, usize),
    Ins(usize, usize),
}

/// Longest-common-subsequence edit script (O(n·m); logs are a few hundred lines).
fn diff_ops(a: &[&str], b: &[&str]) -> Vec<Op> {
    let (n, m) = (a.len(), b.len());
    let mut lcs = vec![0u32; (n + 1) * (m + 1)];
    let idx = |i: usize, j: usize| i * (m + 1) + j;
    for i in (0..n).rev() {
        for j in (0..m).rev() {
            lcs[idx(i, j)] = if a[i] == b[j] {
                lcs[idx(i + 1, j + 1)] + 1
            } else {
                lcs[idx(i + 1, j)].max(lcs[idx(i, j + 1)])
            };
        }
    }
    let (mut i, mut j) = (0, 0);
    let mut ops = Vec::with_capacity(n + m);
    while i < n || j < m {
        if i < n && j < m && a[i] == b[j] {
            ops.push(Op::Same(i, j));
            i += 1;
            j += 1;
        } else if i < n && (j == m || lcs[idx(i + 1, j)] >= lcs[idx(i, j + 1)]) {
            // Deletions before insertions, as diff -u prints a changed line.
            ops.push(Op::Del(i, j));
            i += 1;
        } else {
            ops.push(Op::Ins(i, j));
            j += 1;
        }
    }
    ops
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn masks_addresses_and_marked_figures_only() {
        assert_eq!(
            mask_numbers("ERROR HardFault: pc=0x000001e2 lr=0xfffffffb"),
            "ERROR HardFault: pc=0x… lr=0x…"
        );
        assert_eq!(mask_numbers("INFO  id 0x1f kept"), "INFO  id 0x1f kept");
        assert_eq!(
            mask_numbers("INFO  stack high-water mark: ~576 bytes, 12 ticks"),
            "INFO  stack high-water mark: ~N bytes, 12 ticks"
        );
        assert_eq!(mask_numbers("INFO  −20…+60 °C"), "INFO  −20…+60 °C");
    }

    #[test]
    fn normalize_appends_status_and_drops_trailing_blank_lines() {
        assert_eq!(
            normalize("INFO  a  \r\nINFO  b\n\n", 0),
            "INFO  a\nINFO  b\n[exit status 0]\n"
        );
    }

    #[test]
    fn diff_of_equal_texts_is_empty() {
        assert_eq!(unified_diff("a\nb\n", "a\nb\n", "x", "y"), "");
    }

    #[test]
    fn diff_matches_the_unified_format() {
        // Expected output written by hand following the unified format as GNU diff -u prints
        // it (hunk header `@@ -start,len +start,len @@`, 3 lines of context); common practice.
        let old = "1\n2\n3\n4\n5\n6\n7\n8\n9\n";
        let new = "1\n2\n3\n4\nfive\n6\n7\n8\n9\n";
        let d = unified_diff(old, new, "old", "new");
        assert_eq!(
            d,
            "--- old\n+++ new\n@@ -2,7 +2,7 @@\n 2\n 3\n 4\n-5\n+five\n 6\n 7\n 8\n"
        );
    }

    #[test]
    fn diff_separates_distant_changes_into_hunks() {
        let mut lines: Vec<String> = (1..=20).map(|i| format!("line {i}")).collect();
        let old = lines.join("\n") + "\n";
        lines[1] = "second".into();
        lines[18] = "nineteenth".into();
        let new = lines.join("\n") + "\n";
        let d = unified_diff(&old, &new, "o", "n");
        assert_eq!(d.matches("@@ -").count(), 2, "{d}");
        assert!(
            d.contains("@@ -1,5 +1,5 @@\n line 1\n-line 2\n+second\n"),
            "{d}"
        );
        assert!(d.contains("-line 19\n+nineteenth\n line 20\n"), "{d}");
    }

    #[test]
    fn diff_handles_pure_insertion_at_end() {
        let d = unified_diff("a\nb\n", "a\nb\nc\n", "o", "n");
        assert_eq!(d, "--- o\n+++ n\n@@ -1,2 +1,3 @@\n a\n b\n+c\n");
    }
}
