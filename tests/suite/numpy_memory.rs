//! Memory of the NumPy loader stays proportional to what a file's bytes can hold.

use std::io::Write;

use countersteer::campaign::{LoadOptions, ProblemKind, check_campaign};
use countersteer::progress::Progress;

use super::cli_score_plan::make_campaign;

/// A .npy of zeros with the given dtype and shape.
fn zeros_npy(descr: &str, shape: &[u64], item: usize) -> Vec<u8> {
    let dims: Vec<String> = shape.iter().map(u64::to_string).collect();
    let mut header = format!(
        "{{'descr': '{descr}', 'fortran_order': False, 'shape': ({},), }}",
        dims.join(", ")
    );
    while (10 + header.len() + 1) % 64 != 0 {
        header.push(' ');
    }
    header.push('\n');
    let mut out = b"\x93NUMPY\x01\x00".to_vec();
    out.extend((header.len() as u16).to_le_bytes());
    out.extend(header.as_bytes());
    let n: u64 = shape.iter().product();
    out.resize(out.len() + n as usize * item, 0);
    out
}

#[test]
fn a_small_deflated_archive_declaring_millions_of_rows_is_refused_unread() {
    // 4 million rows of zeros (5 features, 2 channels), deflated: about 100 MB declared in
    // an archive of about 0.1 MB. Numbers worked from the shapes; the archive is built here.
    let dir = tempfile::tempdir().unwrap();
    make_campaign(dir.path());
    let n = 4_000_000u64;
    let path = dir.path().join("rounds/1/bomb.npz");
    let mut zip = zip::ZipWriter::new(std::fs::File::create(&path).unwrap());
    let opts = zip::write::FileOptions::default()
        .compression_method(zip::CompressionMethod::Deflated)
        .compression_level(Some(9));
    for (name, descr, shape, item) in [
        ("states", "<f4", vec![n, 5], 4),
        ("actions", "<f4", vec![n, 2], 4),
        ("t", "<i8", vec![n], 8),
        ("episode", "<i8", vec![n], 8),
    ] {
        zip.start_file(format!("{name}.npy"), opts).unwrap();
        zip.write_all(&zeros_npy(descr, &shape, item)).unwrap();
    }
    zip.finish().unwrap();
    let len = std::fs::metadata(&path).unwrap().len();
    assert!(len < 1 << 20, "{len}");
    let report = check_campaign(dir.path(), &LoadOptions::default(), &Progress::new());
    let p = report
        .problems
        .iter()
        .find(|p| p.file.ends_with("bomb.npz"))
        .unwrap();
    assert_eq!(p.kind, ProblemKind::MalformedNumpy);
    assert!(
        p.message.contains("more than 64 times its size"),
        "{}",
        p.message
    );
}
