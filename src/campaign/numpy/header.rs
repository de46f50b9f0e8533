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
    check_shape(&bytes[start.min(bytes.len())..])?;
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

/// Refuses a description whose `shape` sizes, zeros left out, multiply past `u64::MAX`.
/// npyz multiplies them unchecked (the count of values, and each axis' stride), which panics
/// in a debug build and wraps silently in a release build (found by fuzzing in CI,
/// `fuzz/regressions/npy/shape-product-overflow`). Sizes that are not plain decimal numbers
/// are refused too: npyz evaluates forms such as `0+10000000029`, which hid an overflow from
/// a check of digits alone (`fuzz/regressions/npy/shape-size-expression`).
fn check_shape(text: &[u8]) -> Result<(), String> {
    let text = String::from_utf8_lossy(text);
    let mut rest = text.as_ref();
    while let Some(at) = rest.find("shape") {
        rest = &rest[at + "shape".len()..];
        let after = rest.trim_start_matches(['\'', '"', ' ', '\t']);
        let Some(after) = after.strip_prefix(':') else {
            continue;
        };
        let after = after.trim_start();
        let Some(body) = after.strip_prefix(['(', '[']) else {
            continue;
        };
        let body = &body[..body.find([')', ']']).unwrap_or(body.len())];
        let mut product = 1u64;
        for size in body.split(',').map(str::trim).filter(|t| !t.is_empty()) {
            // NumPy writes plain decimal sizes (Python 2 added an `L`). npyz also evaluates
            // other forms such as `1+2`, so anything else is refused here, not left to it.
            let size = size.strip_suffix('L').unwrap_or(size);
            if size.is_empty() || !size.bytes().all(|b| b.is_ascii_digit()) {
                return Err(format!(
                    "not a NumPy array: the header's shape ({body}) holds `{size}`, not a whole number"
                ));
            }
            let n = size.parse::<u64>().ok().filter(|&n| n > 0);
            product = match n {
                None if size.bytes().any(|b| b != b'0') => None,
                None => Some(product),
                Some(n) => product.checked_mul(n),
            }
            .ok_or_else(|| {
                format!("not a NumPy array: the header's shape ({body}) has more values than can be counted")
            })?;
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
    fn a_shape_whose_product_overflows_is_refused() {
        // Found by fuzzing in CI: npyz multiplied these sizes unchecked and panicked.
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/fuzz/regressions/npy/shape-product-overflow"
        );
        let bytes = std::fs::read(path).unwrap();
        let e = declared_shape(&bytes[..]).unwrap_err();
        assert!(e.contains("more values than can be counted"), "{e}");
        // Worked by hand: 2^32 * 2^32 = 2^64 does not fit; 2^32 * 2^31 = 2^63 does; a zero
        // size leaves the others to multiply on their own (strides still use them).
        assert!(check_shape(b"{'shape': (4294967296, 4294967296)}").is_err());
        assert!(check_shape(b"{'shape': (4294967296, 2147483648)}").is_ok());
        assert!(check_shape(b"{'shape': (0, 4294967296, 4294967296)}").is_err());
        assert!(check_shape(b"{'shape': (0, 3), 'descr': '<f4'}").is_ok());
        assert!(check_shape(b"{\"shape\": [99999999999999999999]}").is_err());
        // Plain sizes and Python 2's `L` pass; expressions do not.
        assert!(check_shape(b"{'shape': (3L, 4L), }").is_ok());
        assert!(check_shape(b"{'shape': (2, 0+10000000029), }").is_err());
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/fuzz/regressions/npy/shape-size-expression"
        );
        let e = declared_shape(&std::fs::read(path).unwrap()[..]).unwrap_err();
        assert!(e.contains("not a whole number"), "{e}");
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
