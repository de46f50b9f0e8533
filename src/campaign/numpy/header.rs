//! The fixed start and the description of a .npy header, checked before npyz parses them:
//! the declared length is bounded and the description's nesting is bounded.

use std::io::Read;

use npyz::NpyFile;

/// Longest accepted .npy header, in bytes. NumPy's own reader refuses headers over 10,000
/// bytes by default; a longer declared length is refused before anything is allocated for it.
pub const MAX_HEADER_BYTES: u64 = 64 << 10;

/// Checks the fixed start of a .npy stream (magic, version, header length) before the header
/// is read, and hands back a reader that still yields those bytes.
pub(super) fn checked_start<R: Read>(mut r: R) -> Result<impl Read, String> {
    let mut head = [0u8; 12];
    let mut got = 0;
    while got < head.len() {
        match r.read(&mut head[got..]) {
            Ok(0) => break,
            Ok(n) => got += n,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
            Err(e) => return Err(format!("not a NumPy array: {e}")),
        }
    }
    if got < 10 || &head[..6] != b"\x93NUMPY" {
        return Err("not a NumPy array: no `\\x93NUMPY` magic at the start".into());
    }
    let header_len = match head[6] {
        1 => u64::from(u16::from_le_bytes([head[8], head[9]])),
        _ if got == 12 => u64::from(u32::from_le_bytes([head[8], head[9], head[10], head[11]])),
        _ => return Err("not a NumPy array: truncated header".into()),
    };
    if header_len > MAX_HEADER_BYTES {
        return Err(format!(
            "header declares {header_len} bytes of description; at most {MAX_HEADER_BYTES} are accepted"
        ));
    }
    // The description starts after the length field: byte 10 in version 1, 12 after.
    let start = if head[6] == 1 { 10 } else { 12 };
    let mut bytes = head[..got].to_vec();
    let want = start + header_len as usize;
    if want > got {
        let mut rest = vec![0u8; want - got];
        r.read_exact(&mut rest)
            .map_err(|e| format!("not a NumPy array: header: {e}"))?;
        bytes.extend(rest);
    }
    check_nesting(&bytes[start.min(bytes.len())..])?;
    Ok(std::io::Cursor::new(bytes).chain(r))
}

/// Deepest bracket nesting accepted in a header's description: a plain array's header
/// nests 2 deep (`{'shape': (2, 3)}`), a structured dtype a few more.
pub const MAX_HEADER_NESTING: usize = 8;

/// Refuses a description nested deeper than [`MAX_HEADER_NESTING`]. The header parser
/// backtracks on nesting: a 280-byte header of `[[[[...` kept it busy for minutes (found by
/// fuzzing, `fuzz/regressions/npy/`).
fn check_nesting(text: &[u8]) -> Result<(), String> {
    let mut depth = 0usize;
    for &c in text {
        match c {
            b'[' | b'(' | b'{' => depth += 1,
            b']' | b')' | b'}' => depth = depth.saturating_sub(1),
            _ => {}
        }
        if depth > MAX_HEADER_NESTING {
            return Err(format!(
                "not a NumPy array: header nests brackets deeper than {MAX_HEADER_NESTING}"
            ));
        }
    }
    Ok(())
}

/// The shape an array's header declares, reading only the header.
pub fn declared_shape<R: Read>(r: R) -> Result<Vec<u64>, String> {
    let npy = NpyFile::new(checked_start(r)?).map_err(|e| format!("not a NumPy array: {e}"))?;
    Ok(npy.shape().to_vec())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_deeply_nested_header_is_refused_at_once() {
        // Found by fuzzing: npyz's parser spent minutes on this 280-byte header.
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/fuzz/regressions/npy/header-nesting-timeout"
        );
        let bytes = std::fs::read(path).unwrap();
        let e = declared_shape(&bytes[..]).unwrap_err();
        assert!(e.contains("nests brackets deeper than 8"), "{e}");
    }

    #[test]
    fn a_plain_header_passes_and_keeps_its_bytes() {
        let mut npy = b"\x93NUMPY\x01\x00".to_vec();
        let text = "{'descr': '<f8', 'fortran_order': False, 'shape': (2, 3), }";
        let text = format!("{text:<117}\n");
        npy.extend((text.len() as u16).to_le_bytes());
        npy.extend(text.as_bytes());
        assert_eq!(declared_shape(&npy[..]).unwrap(), vec![2, 3]);
        let mut all = Vec::new();
        checked_start(&npy[..])
            .unwrap()
            .read_to_end(&mut all)
            .unwrap();
        assert_eq!(all, npy);
    }
}
