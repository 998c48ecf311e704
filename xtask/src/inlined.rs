//! Code of one crate that link-time optimisation inlined into other crates' functions, found
//! through the DWARF line table: `cargo xtask cost`'s `core_inlined_*` figures.
//!
//! The symbol sums of `core_flash_*` count a crate's own functions only. With fat LTO much of a
//! library ends up inside its callers (the scheduler inside the driver's request handling, the
//! design figures inside the firmware's channel set-up), where its symbols no longer exist. The
//! line table still names the source file of every instruction range, so the bytes whose file
//! lies in the crate but whose enclosing function belongs to another crate are that crate's
//! inlined share. Rows at line 0 (compiler-generated, no source line) are not counted; neither is
//! a range of 4 KiB or more (the gap between two line sequences).

/// One row of `objdump --dwarf=decodedline`: the start address of a range, its source line and
/// whether its file is one of the crate's (by path fragment).
struct Row {
    addr: u64,
    line: u64,
    ours: bool,
}

/// Rows of `arm-none-eabi-objdump --dwarf=decodedline` output, sorted by address. A file header
/// is a line ending in `:` that names a path; each row below it is `name line address ...`.
fn rows(decoded: &str, path_fragment: &str) -> Vec<Row> {
    let mut out = Vec::new();
    let mut ours = false;
    for l in decoded.lines() {
        if !l.starts_with(' ') && l.ends_with(':') && (l.contains('/') || l.ends_with(".rs:")) {
            ours = l.contains(path_fragment);
            continue;
        }
        let mut t = l.split_whitespace();
        let (Some(_name), Some(line), Some(addr)) = (t.next(), t.next(), t.next()) else {
            continue;
        };
        let (Ok(line), Some(Ok(addr))) = (
            line.parse::<u64>(),
            addr.strip_prefix("0x").map(|a| u64::from_str_radix(a, 16)),
        ) else {
            continue;
        };
        out.push(Row { addr, line, ours });
    }
    out.sort_by_key(|r| r.addr);
    out
}

/// Function ranges `[start, end)` from `nm -S -C` output (text symbols), each with whether it
/// belongs to `krate` (name starting `krate::` or `<krate::`), sorted by start.
fn functions(nm: &str, krate: &str) -> Vec<(u64, u64, bool)> {
    let plain = format!("{krate}::");
    let impl_ = format!("<{krate}::");
    let mut out: Vec<(u64, u64, bool)> = nm
        .lines()
        .filter_map(|l| {
            let mut t = l.splitn(4, ' ');
            // Thumb symbols have bit 0 set in their address.
            let addr = u64::from_str_radix(t.next()?, 16).ok()? & !1;
            let size = u64::from_str_radix(t.next()?, 16).ok()?;
            let kind = t.next()?;
            let name = t.next()?;
            matches!(kind, "t" | "T").then_some((
                addr,
                addr + size,
                name.starts_with(&plain) || name.starts_with(&impl_),
            ))
        })
        .collect();
    out.sort_unstable();
    out
}

/// Bytes of code from files containing `path_fragment` that lie inside functions not of
/// `krate`: the crate's code inlined into other crates (see the module docs).
pub fn inlined_bytes(decoded: &str, nm: &str, krate: &str, path_fragment: &str) -> u64 {
    let rows = rows(decoded, path_fragment);
    let fns = functions(nm, krate);
    let mut total = 0;
    for w in rows.windows(2) {
        let [a, b] = w else { continue };
        let len = b.addr.saturating_sub(a.addr);
        if !a.ours || a.line == 0 || len == 0 || len >= 4096 {
            continue;
        }
        let i = fns.partition_point(|f| f.0 <= a.addr);
        let Some(&(start, end, in_krate)) = i.checked_sub(1).and_then(|k| fns.get(k)) else {
            continue;
        };
        if start <= a.addr && a.addr < end && !in_krate {
            total += len.min(end - a.addr);
        }
    }
    total
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_the_crates_lines_inside_other_functions_only() {
        // Layout of `objdump --dwarf=decodedline` (binutils 2.40): file header, then rows of
        // name, line, address, optional view and statement flag.
        let decoded = "\
/coilwise/core/src/schedule/mod.rs:
src/schedule/mod.rs                 10               0x100               x
src/schedule/mod.rs                  0               0x108
src/schedule/mod.rs                 11               0x10c               x

/coilwise/driver/src/request.rs:
request.rs                          20               0x110               x
request.rs                          21               0x118               x

/coilwise/core/src/schedule/mod.rs:
src/schedule/mod.rs                 12               0x200               x
src/schedule/mod.rs                 13               0x210               x
";
        // 0x100..0x120 is a driver function (core code inlined into it), 0x200..0x220 a core one.
        let nm = "00000101 00000020 t coilwise_driver::Driver::submit\n\
                  00000201 00000020 t coilwise::schedule::Scheduler::poll\n";
        // 0x100..0x108 (8 bytes, line 10) and 0x10c..0x110 (4 bytes) count; the line-0 range,
        // the driver's own lines and everything inside the core's own function do not.
        assert_eq!(
            inlined_bytes(decoded, nm, "coilwise", "/coilwise/core/src/"),
            12
        );
    }
}
