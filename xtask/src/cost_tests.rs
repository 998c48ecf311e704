//! Tests of [`super`]: log, size and symbol parsing, the budget file.

use super::*;

#[test]
fn parses_cost_lines_and_ignores_others() {
    let log = "INFO  calibration: 26215 ticks per 1024 instructions\n\
               INFO  cost libm_expf_x1 insns 63 stack 16 | one expf\n\
               INFO  cost done\n";
    let f = parse_cost_log(log).unwrap();
    assert_eq!(f.len(), 2);
    assert_eq!((f[0].key.as_str(), f[0].value), ("insns.libm_expf_x1", 63));
    assert_eq!((f[1].key.as_str(), f[1].value), ("stack.libm_expf_x1", 16));
    assert_eq!(f[0].what, "one expf: instructions");
    assert!(parse_cost_log("INFO  nothing here\n").is_err());
}

#[test]
fn sums_flash_sections_from_size_output() {
    // Layout of `arm-none-eabi-size -A` output (GNU binutils, "sysv" format).
    let out = "ELF  :\nsection size addr\n.vector_table 1024 0\n.text 5000 1024\n\
               .rodata 300 6024\n.data 8 536870912\n.bss 40 536870920\n.defmt 12 0\n\
               Total 6384\n";
    assert_eq!(flash_of_sections(out), 1024 + 5000 + 300 + 8);
}

#[test]
fn counts_only_the_crates_text_and_rodata_symbols() {
    // Layout of `arm-none-eabi-nm -S -C` output: address, size (hex), type, name.
    let nm = "00000100 00000010 T coilwise::design::DriverDesign::budget\n\
              00000200 00000020 t <coilwise::units::Volts as defmt::traits::Format>::format\n\
              00000300 00000040 T libm::math::expf::expf\n\
              20000000 00000004 b coilwise::SOME_STATIC\n\
              00000400 00000008 r coilwise::physics::TABLE\n\
              00000500 00000100 T <&T as coilwise_other::Thing>::f\n";
    assert_eq!(crate_symbol_bytes(nm, "coilwise"), 0x10 + 0x20 + 0x08);
}

#[test]
fn budget_file_sections_and_errors() {
    let t = "# c\n[m4f]\ninsns.a = 1_500 # x\n\"stack.a\" = 64\n[m4f.goals]\ninsns.a = 1000\n";
    let l = parse_budget(t).unwrap();
    assert_eq!(l["m4f"].budget["insns.a"], 1500);
    assert_eq!(l["m4f"].budget["stack.a"], 64);
    assert_eq!(l["m4f"].goal["insns.a"], 1000);
    assert!(parse_budget("[nope]\na = 1\n").is_err());
    assert!(parse_budget("a = 1\n").is_err());
    assert!(parse_budget("[m0]\na = x\n").is_err());
    assert!(parse_budget("[m0]\na = 1\na = 2\n").is_err());
}

#[test]
fn marked_number_and_thousands() {
    assert_eq!(
        parse_marked_number("INFO  stack high-water mark: ~576 bytes\n", "mark: ~"),
        Some(576)
    );
    assert_eq!(parse_marked_number("INFO  x\n", "mark: ~"), None);
    assert_eq!(
        parse_marked_number(
            "INFO  application stack above the hardware seam: ~2320 bytes (seam method \
             frames not included)\n",
            "application stack above the hardware seam: ~"
        ),
        Some(2320)
    );
    assert_eq!(thousands(1234567), "1 234 567");
    assert_eq!(thousands(999), "999");
}
