//! Reading a NumPy array value by value, so that loading a step file holds no copy of its
//! arrays beside the step table: each value goes from the file straight into the table.
//!
//! A `.npy` file is streamed as it is; a member of an `.npz` archive is streamed from its own
//! handle on the archive file (stored, or deflated through flate2), with its CRC-32 checked
//! once its end is read ([`ArrayStream::finish`]). Arrays in Fortran order with more than one
//! axis, and archives not opened from a file, are read whole first (the fallback
//! [`ArrayStream::whole`]).

use std::io::{Read, Seek, SeekFrom};
use std::path::Path;

use npyz::{NpyFile, NpyReader, Order, TypeChar};

use super::{Array, Values, header};

type Source = Box<dyn Read>;

enum Kind {
    Whole(Values, usize),
    F32(NpyReader<f32, Source>),
    F64(NpyReader<f64, Source>),
    I64(NpyReader<i64, Source>),
    I32(NpyReader<i32, Source>),
    I16(NpyReader<i16, Source>),
    I8(NpyReader<i8, Source>),
    U32(NpyReader<u32, Source>),
    U16(NpyReader<u16, Source>),
    U8(NpyReader<u8, Source>),
    Bool(NpyReader<bool, Source>),
    Text(NpyReader<String, Source>),
}

/// One array read value by value, in C order.
pub struct ArrayStream {
    /// Shape, C order.
    pub shape: Vec<u64>,
    kind: Kind,
    check: Option<CrcCheck>,
}

/// What kind of values an array holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ValueKind {
    /// Floats.
    Float,
    /// Integers and bools.
    Integer,
    /// Strings.
    Text,
}

fn data_err(e: std::io::Error) -> String {
    format!("array data: {e}")
}

fn next<T: npyz::Deserialize, R: Read>(r: &mut NpyReader<T, R>) -> Result<T, String> {
    match r.next() {
        Some(v) => v.map_err(data_err),
        None => Err("array data ends early".into()),
    }
}

impl ArrayStream {
    /// A stream over an array read whole (C order).
    pub fn whole(a: Array) -> ArrayStream {
        ArrayStream {
            shape: a.shape,
            kind: Kind::Whole(a.values, 0),
            check: None,
        }
    }

    /// Opens a `.npy` stream holding at most `available` bytes, refusing what
    /// [`super::read_array`] refuses (from the header, before any data is read); `Ok(None)`
    /// for an array of several axes in Fortran order, which is read whole instead.
    pub fn open(r: impl Read + 'static, available: u64) -> Result<Option<ArrayStream>, String> {
        let src: Source = Box::new(header::checked_start(r)?);
        let npy = NpyFile::new(src).map_err(|e| format!("not a NumPy array: {e}"))?;
        let shape = npy.shape().to_vec();
        let npyz::DType::Plain(ts) = npy.dtype() else {
            return Err("structured or nested dtypes are not supported".into());
        };
        super::check_declared(&shape, &ts, available)?;
        if npy.order() == Order::Fortran && shape.len() > 1 {
            return Ok(None);
        }
        let e = |e: npyz::DTypeError| format!("array data: {e}");
        let kind = match (ts.type_char(), ts.size_field()) {
            (TypeChar::Float, 4) => Kind::F32(npy.data().map_err(e)?),
            (TypeChar::Float, 8) => Kind::F64(npy.data().map_err(e)?),
            (TypeChar::Int, 8) => Kind::I64(npy.data().map_err(e)?),
            (TypeChar::Int, 4) => Kind::I32(npy.data().map_err(e)?),
            (TypeChar::Int, 2) => Kind::I16(npy.data().map_err(e)?),
            (TypeChar::Int, 1) => Kind::I8(npy.data().map_err(e)?),
            (TypeChar::Uint, 4) => Kind::U32(npy.data().map_err(e)?),
            (TypeChar::Uint, 2) => Kind::U16(npy.data().map_err(e)?),
            (TypeChar::Uint, 1) => Kind::U8(npy.data().map_err(e)?),
            (TypeChar::Bool, _) => Kind::Bool(npy.data().map_err(e)?),
            (TypeChar::UnicodeStr | TypeChar::ByteStr, _) => Kind::Text(npy.data().map_err(e)?),
            (c, s) => return Err(format!("dtype {c:?} of {s} bytes is not supported")),
        };
        Ok(Some(ArrayStream {
            shape,
            kind,
            check: None,
        }))
    }

    /// The kind of values the array holds.
    pub fn value_kind(&self) -> ValueKind {
        match &self.kind {
            Kind::Whole(Values::Numbers(_), _) | Kind::F32(_) | Kind::F64(_) => ValueKind::Float,
            Kind::Whole(Values::Text(_), _) | Kind::Text(_) => ValueKind::Text,
            _ => ValueKind::Integer,
        }
    }

    /// The next value as a number (floats, integers and bools; text is an error).
    pub fn number(&mut self) -> Result<f64, String> {
        Ok(match &mut self.kind {
            Kind::Whole(v, i) => {
                *i += 1;
                match v {
                    Values::Numbers(x) => x.get(*i - 1).copied(),
                    Values::Integers(x) => x.get(*i - 1).map(|&v| v as f64),
                    Values::Text(_) => return Err("text where numbers belong".into()),
                }
                .ok_or("array data ends early")?
            }
            Kind::F32(r) => f64::from(next(r)?),
            Kind::F64(r) => next(r)?,
            Kind::Text(_) => return Err("text where numbers belong".into()),
            _ => self.integer()? as f64,
        })
    }

    /// The next value as an exact integer (integers and bools; others are an error).
    pub fn integer(&mut self) -> Result<i64, String> {
        Ok(match &mut self.kind {
            Kind::Whole(Values::Integers(x), i) => {
                *i += 1;
                *x.get(*i - 1).ok_or("array data ends early")?
            }
            Kind::I64(r) => next(r)?,
            Kind::I32(r) => i64::from(next(r)?),
            Kind::I16(r) => i64::from(next(r)?),
            Kind::I8(r) => i64::from(next(r)?),
            Kind::U32(r) => i64::from(next(r)?),
            Kind::U16(r) => i64::from(next(r)?),
            Kind::U8(r) => i64::from(next(r)?),
            Kind::Bool(r) => i64::from(next(r)?),
            _ => return Err("not an integer array".into()),
        })
    }

    /// The next value as text (string arrays only).
    pub fn text(&mut self) -> Result<String, String> {
        match &mut self.kind {
            Kind::Whole(Values::Text(x), i) => {
                *i += 1;
                x.get(*i - 1)
                    .cloned()
                    .ok_or_else(|| "array data ends early".into())
            }
            Kind::Text(r) => next(r),
            _ => Err("not a string array".into()),
        }
    }

    /// Reads the rest of the member and checks its CRC-32 (streamed `.npz` members only).
    pub fn finish(self) -> Result<(), String> {
        match self.check {
            Some(c) => c.verify(),
            None => Ok(()),
        }
    }
}

/// The CRC-32 check of a streamed zip member: a second handle on the member's bytes,
/// read to the end once the array is consumed (the first handle is owned by npyz).
struct CrcCheck {
    open: Box<dyn FnOnce() -> std::io::Result<Box<dyn Read>>>,
    want: u32,
    size: u64,
}

impl CrcCheck {
    fn verify(self) -> Result<(), String> {
        let damaged = |e: &dyn std::fmt::Display| {
            format!("fails its integrity check ({e}): the file is damaged")
        };
        let mut r = (self.open)().map_err(|e| damaged(&e))?;
        let mut h = crc32fast::Hasher::new();
        let mut buf = vec![0u8; 1 << 16];
        let mut total = 0u64;
        loop {
            let n = r.read(&mut buf).map_err(|e| damaged(&e))?;
            if n == 0 {
                break;
            }
            total += n as u64;
            if total > self.size {
                return Err("holds more data than its size in the archive's directory".into());
            }
            h.update(&buf[..n]);
        }
        if h.finalize() != self.want || total != self.size {
            return Err(damaged(&"CRC-32 mismatch"));
        }
        Ok(())
    }
}

/// Where a member's bytes lie in its archive file and how they are stored.
pub(super) struct MemberPlace {
    pub start: u64,
    pub compressed: u64,
    pub size: u64,
    pub deflated: bool,
    pub crc: u32,
}

fn member_reader(path: &Path, m: &MemberPlace) -> std::io::Result<Box<dyn Read>> {
    let mut f = std::io::BufReader::new(std::fs::File::open(path)?);
    f.seek(SeekFrom::Start(m.start))?;
    let raw = f.take(m.compressed);
    Ok(if m.deflated {
        Box::new(flate2::read::DeflateDecoder::new(raw))
    } else {
        Box::new(raw)
    })
}

/// Streams a member of the archive at `path`, with its CRC-32 checked by
/// [`ArrayStream::finish`]; `Ok(None)` as for [`ArrayStream::open`].
pub(super) fn member_stream(path: &Path, m: MemberPlace) -> Result<Option<ArrayStream>, String> {
    let r = member_reader(path, &m).map_err(|e| format!("cannot read: {e}"))?;
    let Some(mut s) = ArrayStream::open(r.take(m.size), m.size)? else {
        return Ok(None);
    };
    let path = path.to_path_buf();
    let (want, size) = (m.crc, m.size);
    s.check = Some(CrcCheck {
        open: Box::new(move || member_reader(&path, &m)),
        want,
        size,
    });
    Ok(Some(s))
}
