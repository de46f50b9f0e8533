//! The README carries the same safety caution as the export manifests and the desktop program
//! (`countersteer::SAFETY_CAUTION`), word for word.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

#[test]
fn readme_carries_the_shared_safety_caution() {
    let readme =
        std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/README.md")).unwrap();
    let words = |s: &str| -> String {
        s.lines()
            .map(|l| l.trim_start().trim_start_matches('>'))
            .collect::<Vec<_>>()
            .join(" ")
            .split_whitespace()
            .collect::<Vec<_>>()
            .join(" ")
    };
    let caution = words(countersteer::SAFETY_CAUTION);
    assert!(caution.starts_with("Robots and vehicles can hurt people."));
    assert!(words(&readme).contains(&caution), "README lacks: {caution}");
}
