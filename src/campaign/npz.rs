//! The `.npz` container: a zip archive holding one `<name>.npy` member per array, the layout
//! `numpy.savez` writes and `numpy.load` reads.
//!
//! The zip crate is used directly, with only its deflate method (numpy writes members stored
//! or deflated); npyz parses and writes the `.npy` members. Archives this module writes are
//! uncompressed and carry a fixed member time, so the same table always gives the same bytes.

use std::io::{self, Seek, Write};

use npyz::WriterBuilder;
use npyz::write_options::{WithWriter, WriteOptions};
use zip::write::FileOptions;
use zip::{CompressionMethod, DateTime, ZipWriter};

/// The archive member that holds the named array.
pub fn member_name(array: &str) -> String {
    npyz::npz::file_name_from_array_name(array)
}

/// The array a member holds, `None` for a member that is not a `.npy` file.
pub fn array_name(member: &str) -> Option<&str> {
    npyz::npz::array_name_from_file_name(member)
}

/// An `.npz` archive being written. Call [`NpzWriter::finish`] once every array is written:
/// it writes the archive's directory and reports any error doing so.
pub struct NpzWriter<W: Write + Seek> {
    zip: ZipWriter<Latch<W>>,
}

/// A writer that, once a write or seek has failed (a full disk), only counts later ones. The
/// error has already reached the caller; without the latch, the zip writer's drop would try
/// to finish the archive again and print its own raw error (`ZipWriter drop failed`).
pub struct Latch<W> {
    inner: W,
    failed: bool,
    /// Position of the stream as the zip writer sees it.
    pos: u64,
}

impl<W: Write> Write for Latch<W> {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        if !self.failed {
            match self.inner.write(buf) {
                Ok(n) => {
                    self.pos += n as u64;
                    return Ok(n);
                }
                Err(e) => {
                    self.failed = true;
                    return Err(e);
                }
            }
        }
        self.pos += buf.len() as u64;
        Ok(buf.len())
    }

    fn flush(&mut self) -> io::Result<()> {
        if self.failed {
            return Ok(());
        }
        self.inner.flush().inspect_err(|_| self.failed = true)
    }
}

impl<W: Seek> Seek for Latch<W> {
    fn seek(&mut self, to: io::SeekFrom) -> io::Result<u64> {
        if !self.failed {
            return match self.inner.seek(to) {
                Ok(p) => {
                    self.pos = p;
                    Ok(p)
                }
                Err(e) => {
                    self.failed = true;
                    Err(e)
                }
            };
        }
        self.pos = match to {
            io::SeekFrom::Start(p) => p,
            io::SeekFrom::Current(d) | io::SeekFrom::End(d) => self.pos.saturating_add_signed(d),
        };
        Ok(self.pos)
    }
}

/// npyz's writer options bound to the member [`NpzWriter::array`] started.
pub type ArrayBuilder<'a, T, W> = WithWriter<&'a mut ZipWriter<Latch<W>>, WriteOptions<T>>;

impl<W: Write + Seek> NpzWriter<W> {
    /// Starts an archive on `w`.
    pub fn new(w: W) -> Self {
        NpzWriter {
            zip: ZipWriter::new(Latch {
                inner: w,
                failed: false,
                pos: 0,
            }),
        }
    }

    /// Starts the member for array `name` (stored, fixed time); give it a dtype and a shape,
    /// then `begin_nd()`.
    pub fn array<T: npyz::Serialize + ?Sized>(
        &mut self,
        name: &str,
    ) -> io::Result<ArrayBuilder<'_, T, W>> {
        let opts = FileOptions::default()
            .compression_method(CompressionMethod::Stored)
            .last_modified_time(DateTime::default());
        self.zip.start_file(member_name(name), opts)?;
        Ok(WriteOptions::new().writer(&mut self.zip))
    }

    /// Writes a numeric array of the given shape (C order) in its default dtype.
    pub fn numbers<T: npyz::AutoSerialize>(
        &mut self,
        name: &str,
        shape: &[u64],
        values: impl IntoIterator<Item = T>,
    ) -> io::Result<()> {
        let mut arr = self
            .array::<T>(name)?
            .default_dtype()
            .shape(shape)
            .begin_nd()?;
        arr.extend(values)?;
        arr.finish()
    }

    /// Writes a 1-D numpy unicode array (`<U{longest}`), which `numpy.load` reads without
    /// pickle.
    pub fn strings<'s>(
        &mut self,
        name: &str,
        values: impl Iterator<Item = &'s str> + Clone,
    ) -> io::Result<()> {
        let (count, width) = values
            .clone()
            .fold((0u64, 1), |(n, w), s| (n + 1, w.max(s.chars().count())));
        let dtype = npyz::DType::Plain(format!("<U{width}").parse().map_err(io::Error::other)?);
        let mut arr = self
            .array::<String>(name)?
            .dtype(dtype)
            .shape(&[count])
            .begin_nd()?;
        arr.extend(values.map(str::to_string))?;
        arr.finish()
    }

    /// Writes the archive's directory and returns the writer.
    pub fn finish(mut self) -> io::Result<W> {
        let latch = self.zip.finish().map_err(io::Error::from)?;
        if latch.failed {
            return Err(io::Error::other("an earlier write failed"));
        }
        Ok(latch.inner)
    }
}
