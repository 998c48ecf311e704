//! The safety cautions, in one place. Every output that shows stress figures (switch voltage,
//! clamp or avalanche energy, clamp power) carries them: the text report, `report --json`,
//! `compare` (text and `--json`) and the `plot` SVG. The firmware constants carry timing only and
//! a one-line reminder.

/// Cautions shown wherever the tool reports stress.
pub const CAUTIONS: &[&str] = &[
    "These are engineering estimates from first-order models: constant inductance per armature position, ideal clamp elements, no core saturation or eddy currents. Measure the real circuit before relying on them.",
    "Check every stress figure against the component datasheets and their derating curves; where a datasheet and this report disagree, the datasheet wins.",
    "Switching a coil off without a working clamp can put hundreds of volts on the switch and on exposed conductors; an open clamp diode does the same. Do not rely on switch avalanche without an avalanche rating.",
    "Contacts that switch mains are dangerous: follow local electrical codes and have such circuits designed and checked under licensed practice.",
];

/// The cautions as a text section: a `CAUTIONS` heading and one `- ` line each.
pub fn text_section() -> String {
    let mut out = String::from("CAUTIONS\n");
    for c in CAUTIONS {
        out.push_str("- ");
        out.push_str(c);
        out.push('\n');
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_cautions_say_what_the_brief_asks() {
        let all = CAUTIONS.join(" ");
        for needle in [
            "engineering estimates",
            "datasheet",
            "local electrical codes",
            "licensed practice",
            "hundreds of volts",
        ] {
            assert!(all.contains(needle), "no `{needle}` in the cautions");
        }
        assert!(text_section().starts_with("CAUTIONS\n- "));
    }
}
