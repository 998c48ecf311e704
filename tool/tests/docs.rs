//! The design-file documentation and the schema the reader enforces stay in step.

mod common;

use coilwise_tool::schema::KEYS;

fn doc() -> String {
    std::fs::read_to_string(common::root().join("docs/design-file.md")).unwrap()
}

#[test]
fn every_schema_key_is_documented() {
    let doc = doc();
    for k in KEYS {
        assert!(
            doc.contains(&format!("| `{}` |", k.key)),
            "docs/design-file.md has no table row for `{}`",
            k.key
        );
    }
}

#[test]
fn every_documented_key_exists() {
    for line in doc().lines().filter(|l| l.starts_with("| `")) {
        let key = line.split('`').nth(1).unwrap();
        if key.contains('.') {
            assert!(
                KEYS.iter().any(|k| k.key == key),
                "docs/design-file.md documents `{key}`, which the reader rejects"
            );
        }
    }
}

#[test]
fn the_examples_use_only_documented_keys_and_load() {
    for name in ["greenhouse-valve.toml", "greenhouse-pump-relay.toml"] {
        let path = common::root().join("examples").join(name);
        let spec = coilwise_tool::load(path.to_str().unwrap(), &[]);
        assert!(spec.is_ok(), "{name}: {:?}", spec.err());
        let text = std::fs::read_to_string(&path).unwrap();
        assert!(
            text.contains("INVENTED"),
            "{name} labels its values as invented"
        );
    }
}
