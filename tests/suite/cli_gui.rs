//! `countersteer` and `countersteer open DIR` without a display: a clear message naming the
//! headless subcommands, and a usage exit code.
#![allow(clippy::unwrap_used)] // test helpers may panic on a broken fixture

use std::process::Command;

fn run(args: &[&str]) -> (Option<i32>, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_countersteer"))
        .args(args)
        .env_remove("DISPLAY")
        .env_remove("WAYLAND_DISPLAY")
        .output()
        .unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn without_a_display_the_workbench_names_the_headless_subcommands() {
    let (code, err) = run(&[]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("no display"), "{err}");
    assert!(err.contains("countersteer check DIR"), "{err}");
}

#[test]
fn open_refuses_a_folder_without_a_campaign() {
    let dir = tempfile::tempdir().unwrap();
    let (code, err) = run(&["open", dir.path().to_str().unwrap()]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("no campaign.json here"), "{err}");
}
