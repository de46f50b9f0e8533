//! Hostile inputs made at run time (too big, or links, to commit to the corpus): links that
//! leave the campaign folder, files over the record cap, a CSV line with no end, and image
//! headers that declare decompression bombs. Each is refused with a located error; none
//! crashes or allocates what the file declares.

use std::io::Cursor;
use std::path::{Path, PathBuf};

use countersteer::campaign::frame::{MAX_DECODE_SIDE, decode_frame, decode_frame_bytes};
use countersteer::campaign::jsonl::MAX_LINE_BYTES;
use countersteer::campaign::{
    CheckReport, LoadOptions, Location, Problem, ProblemKind, Severity, check_campaign,
};
use countersteer::progress::Progress;

fn corpus() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/bad_inputs")
}

const ROW: &str =
    r#"{"episode": "a", "t": T, "state": [0.0, 0.0, 1.0], "action": [0.0, "cruise"]}"#;

/// A good campaign (the corpus spec and demonstrations) with an empty `rounds/1/`.
fn campaign() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    std::fs::create_dir_all(root.join("demonstrations")).unwrap();
    std::fs::create_dir_all(root.join("rounds/1")).unwrap();
    std::fs::copy(corpus().join("campaign.json"), root.join("campaign.json")).unwrap();
    let demos = corpus().join("good_demonstrations.jsonl");
    std::fs::copy(demos, root.join("demonstrations/d.jsonl")).unwrap();
    dir
}

fn rows(n: usize) -> String {
    (0..n)
        .map(|t| ROW.replace('T', &t.to_string()) + "\n")
        .collect()
}

fn check(root: &Path, opts: &LoadOptions) -> CheckReport {
    check_campaign(root, opts, &Progress::new())
}

fn only_error(report: &CheckReport) -> &Problem {
    let errors: Vec<_> = report
        .problems
        .iter()
        .filter(|p| p.severity == Severity::Error)
        .collect();
    assert_eq!(errors.len(), 1, "{:#?}", report.problems);
    assert!(report.campaign.is_none());
    errors[0]
}

#[cfg(unix)]
fn secret_outside() -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("secret.jsonl");
    std::fs::write(&path, rows(2)).unwrap();
    (dir, path)
}

#[cfg(unix)]
#[test]
fn a_data_file_linking_outside_the_campaign_is_refused() {
    let (_outside, secret) = secret_outside();
    let dir = campaign();
    std::os::unix::fs::symlink(&secret, dir.path().join("rounds/1/steps.jsonl")).unwrap();
    let report = check(dir.path(), &LoadOptions::default());
    let p = only_error(&report);
    assert_eq!(p.kind, ProblemKind::OutsideCampaign);
    assert_eq!(p.file, Path::new("rounds/1/steps.jsonl"));
    assert!(p.message.contains("outside the campaign folder"), "{p}");
}

#[cfg(unix)]
#[test]
fn a_link_that_stays_inside_the_campaign_is_followed() {
    let dir = campaign();
    let root = dir.path();
    std::fs::create_dir_all(root.join("store")).unwrap();
    std::fs::write(root.join("store/steps.txt"), rows(3)).unwrap();
    std::os::unix::fs::symlink("../../store/steps.txt", root.join("rounds/1/steps.jsonl")).unwrap();
    let report = check(root, &LoadOptions::default());
    assert!(report.problems.is_empty(), "{:#?}", report.problems);
    assert_eq!(report.campaign.unwrap().rounds[0].steps.len(), 3);
}

#[cfg(unix)]
#[test]
fn a_round_folder_linking_outside_the_campaign_is_refused() {
    let (outside, _) = secret_outside();
    let dir = campaign();
    std::os::unix::fs::symlink(outside.path(), dir.path().join("rounds/2")).unwrap();
    std::fs::write(dir.path().join("rounds/1/r.jsonl"), rows(2)).unwrap();
    let report = check(dir.path(), &LoadOptions::default());
    let p = only_error(&report);
    assert_eq!(p.kind, ProblemKind::OutsideCampaign);
    assert_eq!(p.file, Path::new("rounds/2"));
}

#[cfg(unix)]
#[test]
fn a_frame_linking_outside_the_campaign_is_refused_by_check_and_decoder() {
    let outside = tempfile::tempdir().unwrap();
    let png = outside.path().join("private.png");
    image::RgbImage::new(2, 2).save(&png).unwrap();
    let dir = campaign();
    let root = dir.path();
    std::fs::create_dir_all(root.join("rounds/1/frames")).unwrap();
    std::os::unix::fs::symlink(&png, root.join("rounds/1/frames/0.png")).unwrap();
    let row = ROW
        .replace('T', "0")
        .replace('}', r#", "frame": "frames/0.png"}"#);
    std::fs::write(root.join("rounds/1/r.jsonl"), row + "\n").unwrap();
    let report = check(root, &LoadOptions::default());
    let p = only_error(&report);
    assert_eq!(
        (p.kind, p.location, p.field.as_str()),
        (ProblemKind::BadFramePath, Location::Line(1), "frame")
    );
    assert!(p.message.contains("outside the campaign folder"), "{p}");
    let e = decode_frame(root, "rounds/1/frames/0.png").unwrap_err();
    assert!(e.contains("outside the campaign folder"), "{e}");
}

#[cfg(unix)]
#[test]
fn a_campaign_file_linking_outside_is_refused() {
    let outside = tempfile::tempdir().unwrap();
    let spec = outside.path().join("campaign.json");
    std::fs::copy(corpus().join("campaign.json"), &spec).unwrap();
    let dir = campaign();
    std::fs::remove_file(dir.path().join("campaign.json")).unwrap();
    std::os::unix::fs::symlink(&spec, dir.path().join("campaign.json")).unwrap();
    let p = only_error(&check(dir.path(), &LoadOptions::default())).clone();
    assert_eq!(p.kind, ProblemKind::OutsideCampaign);
    assert_eq!(p.file, Path::new("campaign.json"));
}

#[cfg(unix)]
#[test]
fn an_npy_sibling_linking_outside_is_refused() {
    let dir = campaign();
    let root = dir.path();
    let mut steps = countersteer::campaign::StepTable::new(3, 2);
    steps.states = vec![0.0, 0.0, 1.0];
    steps.actions = vec![0.0, 0.0];
    steps.t = vec![0];
    let mut f = std::fs::File::create(root.join("rounds/1/r.npz")).unwrap();
    steps.episodes.push(countersteer::campaign::Episode {
        name: "a".into(),
        start: 0,
        len: 1,
        source: 0,
    });
    countersteer::campaign::write::write_npz(&steps, &mut f).unwrap();
    drop(f);
    // Unpack the archive into a .npy set, then point its `t` array outside the campaign.
    let npz = std::fs::File::open(root.join("rounds/1/r.npz")).unwrap();
    let mut zip = zip::ZipArchive::new(npz).unwrap();
    for name in ["states", "actions", "episode", "t"] {
        let mut m = zip.by_name(&format!("{name}.npy")).unwrap();
        let mut bytes = Vec::new();
        std::io::Read::read_to_end(&mut m, &mut bytes).unwrap();
        std::fs::write(root.join(format!("rounds/1/part.{name}.npy")), bytes).unwrap();
    }
    std::fs::remove_file(root.join("rounds/1/r.npz")).unwrap();
    assert!(check(root, &LoadOptions::default()).campaign.is_some());
    let outside = tempfile::tempdir().unwrap();
    let t = outside.path().join("t.npy");
    std::fs::rename(root.join("rounds/1/part.t.npy"), &t).unwrap();
    std::os::unix::fs::symlink(&t, root.join("rounds/1/part.t.npy")).unwrap();
    let report = check(root, &LoadOptions::default());
    let p = only_error(&report);
    assert_eq!(
        (p.kind, p.field.as_str()),
        (ProblemKind::MalformedNumpy, "t")
    );
    assert!(p.message.contains("outside the campaign folder"), "{p}");
}

fn capped(cap: usize) -> LoadOptions {
    LoadOptions {
        record_cap: cap,
        ..LoadOptions::default()
    }
}

#[test]
fn a_jsonl_file_over_the_record_cap_stops_at_the_first_record_too_many() {
    let dir = campaign();
    std::fs::write(dir.path().join("rounds/1/r.jsonl"), rows(8)).unwrap();
    assert!(check(dir.path(), &capped(8)).campaign.is_some());
    let report = check(dir.path(), &capped(5));
    let p = only_error(&report);
    assert_eq!(
        (p.kind, p.location),
        (ProblemKind::TooMany, Location::Line(6))
    );
    assert!(p.message.contains("more than 5 records"), "{p}");
}

#[test]
fn a_csv_file_over_the_record_cap_is_refused() {
    let dir = campaign();
    let mut text = String::from("episode,t,offset,angle,speed,steer,mode\n");
    for t in 0..7 {
        text += &format!("a,{t},0,0,1,0,cruise\n");
    }
    std::fs::write(dir.path().join("rounds/1/r.csv"), text).unwrap();
    let p = only_error(&check(dir.path(), &capped(4))).clone();
    // The header is line 1: the fifth record is on line 6.
    assert_eq!(
        (p.kind, p.location),
        (ProblemKind::TooMany, Location::Line(6))
    );
}

#[test]
fn an_npz_over_the_record_cap_is_refused_from_its_header() {
    let dir = campaign();
    let bad = "npz_float_time.npz"; // two rows; the cap of one refuses it before `t` is judged
    std::fs::copy(corpus().join(bad), dir.path().join("rounds/1").join(bad)).unwrap();
    let report = check(dir.path(), &capped(1));
    let got: Vec<_> = report
        .problems
        .iter()
        .filter(|p| p.file.ends_with(bad))
        .collect();
    assert_eq!(got.len(), 1, "{got:#?}");
    let p = got[0];
    assert_eq!((p.kind, p.field.as_str()), (ProblemKind::TooMany, "states"));
    assert!(p.message.contains("declares 2 rows"), "{p}");
}

#[test]
fn a_csv_line_with_no_end_is_refused_at_the_cap() {
    let dir = campaign();
    let mut text = String::from("episode,t,offset,angle,speed,steer,mode\na,0,0,0,1,0,cruise\n");
    text.push_str("a,1,0,0,1,0,");
    text.push_str(&"x".repeat(MAX_LINE_BYTES + 10));
    std::fs::write(dir.path().join("rounds/1/r.csv"), text).unwrap();
    let p = only_error(&check(dir.path(), &LoadOptions::default())).clone();
    assert_eq!(
        (p.kind, p.location),
        (ProblemKind::TooLong, Location::Line(3))
    );
}

#[test]
fn a_jsonl_line_over_the_cap_is_skipped_and_reading_goes_on() {
    let dir = campaign();
    let mut text = rows(1);
    text.push_str(&" ".repeat(MAX_LINE_BYTES + 1));
    text.push_str("\n{oops\n");
    std::fs::write(dir.path().join("rounds/1/r.jsonl"), text).unwrap();
    let report = check(dir.path(), &LoadOptions::default());
    let got: Vec<_> = report
        .problems
        .iter()
        .map(|p| (p.kind, p.location))
        .collect();
    assert_eq!(
        got,
        [
            (ProblemKind::TooLong, Location::Line(2)),
            (ProblemKind::MalformedJson, Location::Line(3))
        ]
    );
}

/// A standard CRC-32 (IEEE 802.3, as PNG chunks use; PNG specification, section 5.5).
fn crc32(bytes: &[u8]) -> u32 {
    let mut c = !0u32;
    for &b in bytes {
        c ^= u32::from(b);
        for _ in 0..8 {
            c = if c & 1 == 1 {
                0xEDB8_8320 ^ (c >> 1)
            } else {
                c >> 1
            };
        }
    }
    !c
}

/// A real 1 x 1 PNG whose header (IHDR) is rewritten to declare other sides, bit depth and
/// colour type, with its checksum fixed: a decoder trusting the header would allocate for it.
fn png_declaring(width: u32, height: u32, depth: u8, colour: u8) -> Vec<u8> {
    let mut out = Cursor::new(Vec::new());
    image::RgbImage::new(1, 1)
        .write_to(&mut out, image::ImageFormat::Png)
        .unwrap();
    let mut png = out.into_inner();
    // 8-byte signature, 4-byte length, then "IHDR" and its 13 data bytes, then the CRC.
    assert_eq!(&png[12..16], b"IHDR");
    png[16..20].copy_from_slice(&width.to_be_bytes());
    png[20..24].copy_from_slice(&height.to_be_bytes());
    png[24] = depth;
    png[25] = colour;
    let crc = crc32(&png[12..29]);
    png[29..33].copy_from_slice(&crc.to_be_bytes());
    png
}

#[test]
fn the_crc_matches_the_png_specification_check_value() {
    // The check value of CRC-32/ISO-HDLC for "123456789" (catalogue of CRC algorithms).
    assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
}

#[test]
fn an_image_declaring_huge_sides_is_refused_at_its_header() {
    let bomb = png_declaring(100_000, 100_000, 8, 2);
    assert_eq!(bomb.len(), png_declaring(1, 1, 8, 2).len()); // a few dozen bytes
    let e = decode_frame_bytes(&bomb).unwrap_err();
    assert!(e.to_lowercase().contains("limit"), "{e}");
    let tall = png_declaring(1, MAX_DECODE_SIDE + 1, 8, 2);
    assert!(decode_frame_bytes(&tall).is_err());
}

#[test]
fn an_image_within_the_side_limit_but_over_the_memory_limit_is_refused() {
    // 8000 x 8000 RGBA at 16 bits is 512 MB: sides allowed, allocation not.
    let e = decode_frame_bytes(&png_declaring(8000, 8000, 16, 6)).unwrap_err();
    assert!(e.to_lowercase().contains("limit"), "{e}");
}

#[test]
fn an_image_bomb_in_a_campaign_frame_is_an_error_naming_the_frame() {
    let dir = campaign();
    std::fs::create_dir_all(dir.path().join("rounds/1/frames")).unwrap();
    let rel = "rounds/1/frames/0.png";
    std::fs::write(dir.path().join(rel), png_declaring(60_000, 60_000, 8, 6)).unwrap();
    let e = decode_frame(dir.path(), rel).unwrap_err();
    assert!(e.starts_with("frame `rounds/1/frames/0.png`: "), "{e}");
}

#[test]
fn a_utf16_campaign_file_is_named_as_such() {
    let dir = campaign();
    let text = std::fs::read_to_string(dir.path().join("campaign.json")).unwrap();
    let mut utf16 = vec![0xFF, 0xFE];
    utf16.extend(text.encode_utf16().flat_map(u16::to_le_bytes));
    std::fs::write(dir.path().join("campaign.json"), utf16).unwrap();
    let p = only_error(&check(dir.path(), &LoadOptions::default())).clone();
    assert_eq!(
        (p.kind, p.location),
        (ProblemKind::NotUtf8, Location::Line(1))
    );
    assert!(p.message.contains("save it as UTF-8"), "{p}");
}
