//! THIRD-PARTY-NOTICES: it carries the notices of the works built into the program (the DejaVu
//! Sans font's licence, the cividis table's notice), is compiled into the program, and is
//! reachable from the window's help.

#![allow(clippy::unwrap_used)] // test code: a panic is a failure report

use crate::common;
#[cfg(feature = "gui")]
use crate::window_kit;

#[cfg(feature = "gui")]
use egui_kittest::kittest::Queryable;

fn root(rel: &str) -> String {
    std::fs::read_to_string(std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join(rel)).unwrap()
}

#[test]
fn the_notices_file_carries_the_font_and_colour_table_notices_and_is_compiled_in() {
    let file = root("THIRD-PARTY-NOTICES");
    assert_eq!(countersteer::THIRD_PARTY_NOTICES, file);
    // The DejaVu licence's own opening lines, its Bitstream Vera and Arev parts (the
    // licence text as DejaVu 2.37 ships it).
    for line in [
        "Fonts are (c) Bitstream (see below). DejaVu changes are in public domain.",
        "Copyright (c) 2003 by Bitstream, Inc. All Rights Reserved. Bitstream Vera is",
        "Copyright (c) 2006 by Tavmjong Bah. All Rights Reserved.",
        "Copyright (c) 2017, Battelle Memorial Institute",
    ] {
        assert!(file.contains(line), "THIRD-PARTY-NOTICES lacks {line:?}");
    }
    // The cividis notice is the one kept beside the table in the source, word for word.
    let table = root("src/plotting/cividis_table.rs");
    let kept: Vec<&str> = table
        .lines()
        .skip_while(|l| !l.contains("Copyright (c) 2017, Battelle"))
        .take_while(|l| l.starts_with("//"))
        .map(|l| l.trim_start_matches("//").trim())
        .filter(|l| !l.is_empty())
        .collect();
    assert!(kept.len() > 20, "{kept:?}");
    let file_lines: Vec<&str> = file.lines().map(str::trim).collect();
    for l in kept {
        assert!(file_lines.contains(&l), "THIRD-PARTY-NOTICES lacks {l:?}");
    }
    assert!(root("README.md").contains("THIRD-PARTY-NOTICES"));
}

#[cfg(feature = "gui")]
#[test]
fn the_help_overlay_opens_the_notices() {
    let dir = tempfile::tempdir().unwrap();
    common::rover::write_campaign(dir.path());
    let mut h = window_kit::harness(dir.path(), "ana");
    h.key_press(egui::Key::F1);
    h.run_steps(2);
    assert!(h.query_by_label_contains("Battelle").is_none());
    // Through the accessibility tree (a screen reader's click), which reaches the button
    // wherever the overlay lays it out.
    h.get_by_label("Licences").click_accesskit();
    h.run_steps(2);
    assert!(
        h.query_by_label_contains("Works by others built into it")
            .is_some()
    );
    assert!(
        h.query_by_label_contains("Battelle Memorial Institute")
            .is_some()
    );
}
