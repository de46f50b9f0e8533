//! NumPy step data: an `.npz` archive, or a set of `.npy` files sharing a stem
//! (`part.states.npy`, `part.actions.npy`, `part.episode.npy`, `part.t.npy`, ...).
//!
//! Arrays: `states` (n, D) float, `actions` (n, A) float (discrete channels hold choice
//! indices), `episode` (n,) integer or string, `t` (n,) integer; optional `intervention` (n,)
//! bool or integer, `frame` (n,) string (empty for none), `samples` (n, S, A) float.
//! Parsing is npyz's; before any array is read its declared size is checked against the bytes
//! that hold it, so a header cannot make the loader allocate more than the file carries.

use std::fs::File;
use std::io::{BufReader, Read, Seek};
use std::path::Path;

use npyz::{NpyFile, Order, TypeChar};

mod header;
mod rows;
mod stream;

pub use header::{MAX_HEADER_BYTES, MAX_HEADER_NESTING, declared_shape};
pub use rows::read_numpy;
pub use stream::{ArrayStream, ValueKind};

use super::error::ProblemKind;
use super::npz;

/// The array names a NumPy step set may hold.
pub const ARRAY_NAMES: [&str; 7] = [
    "states",
    "actions",
    "episode",
    "t",
    "intervention",
    "frame",
    "samples",
];

/// Values of one array, converted to a common type.
#[derive(Debug, Clone, PartialEq)]
pub enum Values {
    /// Floats, integers and bools as f64.
    Numbers(Vec<f64>),
    /// Integers kept exact.
    Integers(Vec<i64>),
    /// Strings.
    Text(Vec<String>),
}

/// One array: its shape (C order) and values.
#[derive(Debug, Clone, PartialEq)]
pub struct Array {
    /// Shape, C order.
    pub shape: Vec<u64>,
    /// Values, C order.
    pub values: Values,
}

/// Longest accepted fixed-width string item (episode names, frame paths), in bytes.
pub const MAX_TEXT_BYTES: u64 = 4096;

/// Refuses, from a header alone, a shape whose size overflows, strings longer than
/// [`MAX_TEXT_BYTES`], zero-width items, and more data than `available` bytes hold.
fn check_declared(shape: &[u64], ts: &npyz::TypeStr, available: u64) -> Result<(), String> {
    let count = shape
        .iter()
        .try_fold(1u64, |a, &d| a.checked_mul(d))
        .ok_or("shape overflows")?;
    let item = ts.num_bytes().unwrap_or(0) as u64;
    let text = matches!(ts.type_char(), TypeChar::UnicodeStr | TypeChar::ByteStr);
    if text && item > MAX_TEXT_BYTES {
        return Err(format!(
            "strings of {item} bytes each; names and paths may take at most {MAX_TEXT_BYTES}"
        ));
    }
    // Found by fuzzing: a zero-width type (`<U0`) passes the size check below with any
    // count, and reading 10^16 empty strings exhausted memory.
    if item == 0 && count > 0 {
        return Err(format!(
            "header declares {count} values of 0 bytes each; a zero-width type holds no data"
        ));
    }
    if count.saturating_mul(item) > available {
        return Err(format!(
            "header declares {count} values of {item} bytes but only {available} bytes follow"
        ));
    }
    Ok(())
}

/// Reads an array, refusing a declared size larger than `available` bytes.
pub fn read_array<R: Read>(r: R, available: u64) -> Result<Array, String> {
    let npy =
        NpyFile::new(header::checked_start(r)?).map_err(|e| format!("not a NumPy array: {e}"))?;
    let shape = npy.shape().to_vec();
    let npyz::DType::Plain(ts) = npy.dtype() else {
        return Err("structured or nested dtypes are not supported".into());
    };
    check_declared(&shape, &ts, available)?;
    let count = shape.iter().product::<u64>();
    let fortran = npy.order() == Order::Fortran;
    let size = ts.size_field();
    let e = |e: std::io::Error| format!("array data: {e}");
    let values = match (ts.type_char(), size) {
        (TypeChar::Float, 4) => Values::Numbers(
            npy.into_vec::<f32>()
                .map_err(e)?
                .into_iter()
                .map(f64::from)
                .collect(),
        ),
        (TypeChar::Float, 8) => Values::Numbers(npy.into_vec::<f64>().map_err(e)?),
        (TypeChar::Int, 8) => Values::Integers(npy.into_vec::<i64>().map_err(e)?),
        (TypeChar::Int, 4) => Values::Integers(
            npy.into_vec::<i32>()
                .map_err(e)?
                .into_iter()
                .map(i64::from)
                .collect(),
        ),
        (TypeChar::Int, 2) => Values::Integers(
            npy.into_vec::<i16>()
                .map_err(e)?
                .into_iter()
                .map(i64::from)
                .collect(),
        ),
        (TypeChar::Int, 1) => Values::Integers(
            npy.into_vec::<i8>()
                .map_err(e)?
                .into_iter()
                .map(i64::from)
                .collect(),
        ),
        (TypeChar::Uint, 4) => Values::Integers(
            npy.into_vec::<u32>()
                .map_err(e)?
                .into_iter()
                .map(i64::from)
                .collect(),
        ),
        (TypeChar::Uint, 2) => Values::Integers(
            npy.into_vec::<u16>()
                .map_err(e)?
                .into_iter()
                .map(i64::from)
                .collect(),
        ),
        (TypeChar::Uint, 1) => Values::Integers(
            npy.into_vec::<u8>()
                .map_err(e)?
                .into_iter()
                .map(i64::from)
                .collect(),
        ),
        (TypeChar::Bool, _) => Values::Integers(
            npy.into_vec::<bool>()
                .map_err(e)?
                .into_iter()
                .map(i64::from)
                .collect(),
        ),
        (TypeChar::UnicodeStr | TypeChar::ByteStr, _) => {
            Values::Text(npy.into_vec::<String>().map_err(e)?)
        }
        (c, s) => return Err(format!("dtype {c:?} of {s} bytes is not supported")),
    };
    let got = match &values {
        Values::Numbers(v) => v.len(),
        Values::Integers(v) => v.len(),
        Values::Text(v) => v.len(),
    } as u64;
    if got != count {
        return Err(format!("expected {count} values, the data holds {got}"));
    }
    let values = if fortran && shape.len() > 1 {
        to_c_order(values, &shape)
    } else {
        values
    };
    Ok(Array { shape, values })
}

fn to_c_order(v: Values, shape: &[u64]) -> Values {
    let dims: Vec<usize> = shape.iter().map(|&d| d as usize).collect();
    let n: usize = dims.iter().product();
    let idx: Vec<usize> = (0..n)
        .map(|c| {
            // c is a C-order index; find its Fortran-order position.
            let (mut rem, mut f, mut stride) = (c, 0, 1);
            let mut coords = vec![0; dims.len()];
            for (k, &d) in dims.iter().enumerate().rev() {
                coords[k] = rem % d.max(1);
                rem /= d.max(1);
            }
            for (k, &d) in dims.iter().enumerate() {
                f += coords[k] * stride;
                stride *= d;
            }
            f
        })
        .collect();
    match v {
        Values::Numbers(x) => Values::Numbers(idx.iter().map(|&i| x[i]).collect()),
        Values::Integers(x) => Values::Integers(idx.iter().map(|&i| x[i]).collect()),
        Values::Text(x) => Values::Text(idx.iter().map(|&i| x[i].clone()).collect()),
    }
}

/// A source of named arrays: an open .npz, or sibling .npy files.
pub trait ArraySource {
    /// Reads the named array, `Ok(None)` when absent.
    fn array(&mut self, name: &str) -> Result<Option<Array>, String>;

    /// The shape the named array's header declares, reading nothing else; `Ok(None)` when
    /// absent. Lets a reader refuse an oversized array before allocating for it.
    fn shape(&mut self, name: &str) -> Result<Option<Vec<u64>>, String>;

    /// The named array to be read value by value, `Ok(None)` when absent. By default the
    /// array is read whole first.
    fn stream(&mut self, name: &str) -> Result<Option<ArrayStream>, String> {
        Ok(self.array(name)?.map(ArrayStream::whole))
    }
}

/// Most bytes of arrays an `.npz` archive may declare per byte of the archive (plus
/// [`EXPANSION_ALLOWANCE`]). Memory follows what is declared, so a small archive of
/// compressed repetition (1.1 MB declaring 9.9 million rows of zeros) is refused before
/// anything is read. Deflated real-valued data shrinks to about half; this leaves room for
/// columns that compress far better (flags, time indices).
pub const MAX_EXPANSION: u64 = 64;
/// Declared bytes every archive may hold whatever its size.
pub const EXPANSION_ALLOWANCE: u64 = 16 << 20;

/// Arrays of an `.npz` archive (a file by default; any seekable reader for tests and fuzzing).
pub struct NpzSource<R: Read + Seek = BufReader<File>> {
    zip: zip::ZipArchive<R>,
    /// The archive's file, when opened from one: members are then streamed from it.
    path: Option<std::path::PathBuf>,
}

impl NpzSource {
    /// Opens an archive.
    pub fn open(path: &Path) -> Result<Self, String> {
        let file = File::open(path).map_err(|e| format!("not a readable .npz archive: {e}"))?;
        let mut src = NpzSource::new(BufReader::new(file))?;
        src.path = Some(path.to_path_buf());
        Ok(src)
    }
}

impl<R: Read + Seek> NpzSource<R> {
    /// Reads an archive from any seekable reader; refuses one that declares more than
    /// [`MAX_EXPANSION`] times its own size in arrays.
    pub fn new(mut r: R) -> Result<Self, String> {
        let len = r.seek(std::io::SeekFrom::End(0)).unwrap_or(0);
        let mut zip =
            zip::ZipArchive::new(r).map_err(|e| format!("not a readable .npz archive: {e}"))?;
        let mut declared = 0u64;
        for i in 0..zip.len() {
            let f = zip
                .by_index_raw(i)
                .map_err(|e| format!("not a readable .npz archive: {e}"))?;
            declared = declared.saturating_add(f.size());
        }
        if declared
            > len
                .saturating_mul(MAX_EXPANSION)
                .saturating_add(EXPANSION_ALLOWANCE)
        {
            return Err(format!(
                "its arrays declare {declared} bytes in an archive of {len} bytes (more than \
                 {MAX_EXPANSION} times its size): refused, since reading it would take memory \
                 out of all proportion to the file; save it uncompressed (numpy.savez)"
            ));
        }
        Ok(NpzSource { zip, path: None })
    }

    /// Names of the arrays in the archive.
    pub fn names(&self) -> Vec<String> {
        self.zip
            .file_names()
            .filter_map(npz::array_name)
            .map(str::to_string)
            .collect()
    }
}

impl<R: Read + Seek> ArraySource for NpzSource<R> {
    fn stream(&mut self, name: &str) -> Result<Option<ArrayStream>, String> {
        let member = npz::member_name(name);
        let Some(path) = self.path.clone() else {
            return Ok(self.array(name)?.map(ArrayStream::whole));
        };
        let place = match self.zip.by_name(&member) {
            Ok(f) => stream::MemberPlace {
                start: f.data_start(),
                compressed: f.compressed_size(),
                size: f.size(),
                deflated: f.compression() == zip::CompressionMethod::Deflated,
                crc: f.crc32(),
            },
            Err(zip::result::ZipError::FileNotFound) => return Ok(None),
            Err(e) => return Err(format!("member `{member}`: {e}")),
        };
        match stream::member_stream(&path, place) {
            Ok(Some(s)) => Ok(Some(s)),
            Ok(None) => Ok(self.array(name)?.map(ArrayStream::whole)),
            Err(e) => Err(format!("member `{member}`: {e}")),
        }
    }

    fn array(&mut self, name: &str) -> Result<Option<Array>, String> {
        let member = npz::member_name(name);
        match self.zip.by_name(&member) {
            Ok(mut f) => {
                let size = f.size();
                let mut counted = Counted(&mut f, 0);
                let a = read_array(&mut counted, size);
                let used = counted.1;
                a.and_then(|a| read_to_end(&mut f, size.saturating_sub(used)).map(|()| a))
                    .map(Some)
                    .map_err(|e| format!("member `{member}`: {e}"))
            }
            Err(zip::result::ZipError::FileNotFound) => Ok(None),
            Err(e) => Err(format!("member `{member}`: {e}")),
        }
    }

    fn shape(&mut self, name: &str) -> Result<Option<Vec<u64>>, String> {
        let member = npz::member_name(name);
        match self.zip.by_name(&member) {
            Ok(f) => declared_shape(f)
                .map(Some)
                .map_err(|e| format!("member `{member}`: {e}")),
            Err(zip::result::ZipError::FileNotFound) => Ok(None),
            Err(e) => Err(format!("member `{member}`: {e}")),
        }
    }
}

/// A reader that counts the bytes read through it.
struct Counted<R>(R, u64);

impl<R: Read> Read for Counted<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.0.read(buf)?;
        self.1 += n as u64;
        Ok(n)
    }
}

/// Reads what is left of a zip member (`left` bytes by its size in the archive's directory)
/// up to its end, so that the zip reader checks the member's CRC-32, which it does only on
/// reaching the end: without this, a damaged member was read as whatever bytes it held.
fn read_to_end(r: &mut impl Read, left: u64) -> Result<(), String> {
    let n = std::io::copy(&mut r.take(left.saturating_add(1)), &mut std::io::sink())
        .map_err(|e| format!("fails its integrity check ({e}): the file is damaged"))?;
    if n > left {
        return Err("holds more data than its size in the archive's directory".into());
    }
    Ok(())
}

/// Arrays of `<stem>.<name>.npy` files in one folder of a campaign.
pub struct NpySetSource {
    /// The campaign folder: no file is read from outside it, even through a link.
    pub root: std::path::PathBuf,
    /// Folder of the files, relative to `root`.
    pub dir: std::path::PathBuf,
    /// Shared stem.
    pub stem: String,
}

impl NpySetSource {
    fn open(&self, name: &str) -> Result<Option<File>, String> {
        let file = format!("{}.{name}.npy", self.stem);
        let path = match super::confine::confined(&self.root, &self.dir.join(&file)) {
            Ok(p) => p,
            Err(super::confine::Refused::Missing) => return Ok(None),
            Err(e) => return Err(format!("{file}: {e}")),
        };
        File::open(&path)
            .map(Some)
            .map_err(|e| format!("{file}: {e}"))
    }
}

impl ArraySource for NpySetSource {
    fn array(&mut self, name: &str) -> Result<Option<Array>, String> {
        let Some(f) = self.open(name)? else {
            return Ok(None);
        };
        let size = f.metadata().map(|m| m.len()).unwrap_or(0);
        read_array(BufReader::new(f), size)
            .map(Some)
            .map_err(|e| format!("{name}.npy: {e}"))
    }

    fn stream(&mut self, name: &str) -> Result<Option<ArrayStream>, String> {
        let Some(f) = self.open(name)? else {
            return Ok(None);
        };
        let size = f.metadata().map(|m| m.len()).unwrap_or(0);
        match ArrayStream::open(BufReader::new(f), size) {
            Ok(Some(s)) => Ok(Some(s)),
            Ok(None) => Ok(self.array(name)?.map(ArrayStream::whole)),
            Err(e) => Err(format!("{name}.npy: {e}")),
        }
    }

    fn shape(&mut self, name: &str) -> Result<Option<Vec<u64>>, String> {
        let Some(f) = self.open(name)? else {
            return Ok(None);
        };
        declared_shape(BufReader::new(f))
            .map(Some)
            .map_err(|e| format!("{name}.npy: {e}"))
    }
}

/// Most ensemble samples per step a NumPy `samples` array may declare.
pub const MAX_SAMPLES_PER_STEP: u64 = 1024;

/// Refuses, from its declared shape alone, an array with more rows than the record cap or
/// wider rows than its name allows, so that nothing is allocated for it.
fn oversized(
    name: &str,
    shape: &[u64],
    cap: u64,
    d: usize,
    a: usize,
) -> Option<(ProblemKind, String)> {
    let rows = shape.first().copied().unwrap_or(1);
    if rows > cap {
        let msg = format!(
            "declares {rows} rows; a file may hold at most {cap} records (split it, or raise the record cap)"
        );
        return Some((ProblemKind::TooMany, msg));
    }
    let width = match name {
        "states" => d as u64,
        "actions" => a as u64,
        "samples" => MAX_SAMPLES_PER_STEP * a as u64,
        _ => 1,
    };
    let per_row = shape
        .iter()
        .skip(1)
        .try_fold(1u64, |p, &x| p.checked_mul(x))
        .unwrap_or(u64::MAX);
    (per_row > width.max(1)).then(|| {
        let msg = format!("shape {shape:?} declares {per_row} values per row; at most {width} fit");
        (ProblemKind::WrongDimension, msg)
    })
}
