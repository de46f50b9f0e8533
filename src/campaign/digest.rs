//! Digests of the files a campaign was loaded from, taken from exactly the bytes the loader
//! read, while it read them (each file is read once): an export's manifest names the data its
//! rows came from, even when a file is replaced on disk after loading.

use std::io::{self, Read, Seek, SeekFrom};

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

/// A file and its SHA-256.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct FileDigest {
    /// Path relative to the campaign folder (inputs) or file name (the output), `/`-separated.
    pub file: String,
    /// Size in bytes.
    pub bytes: u64,
    /// SHA-256, lowercase hex.
    pub sha256: String,
}

/// A reader that hashes every byte it passes on.
pub struct HashingReader<R> {
    inner: R,
    hash: Sha256,
    bytes: u64,
}

impl<R> HashingReader<R> {
    /// Wraps a reader positioned at the start of its file.
    pub fn new(inner: R) -> Self {
        HashingReader {
            inner,
            hash: Sha256::new(),
            bytes: 0,
        }
    }

    /// The digest of the bytes read so far, named `file`.
    pub fn digest(&self, file: String) -> FileDigest {
        FileDigest {
            file,
            bytes: self.bytes,
            sha256: hex(self.hash.clone().finalize().as_slice()),
        }
    }
}

impl<R: Read> Read for HashingReader<R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.hash.update(&buf[..n]);
        self.bytes += n as u64;
        Ok(n)
    }
}

/// Lowercase hex of bytes.
pub fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

/// The digest of everything a reader yields, read in blocks (never whole into memory).
pub fn digest_reader(r: impl Read, name: String) -> io::Result<FileDigest> {
    let mut h = HashingReader::new(r);
    io::copy(&mut h, &mut io::sink())?;
    Ok(h.digest(name))
}

/// Hashes an open file from its start to its end in blocks, then rewinds it: the digest of
/// the very file (the same open handle) the loader goes on to read at random.
pub fn digest_open_file(file: &mut std::fs::File, name: String) -> io::Result<FileDigest> {
    file.seek(SeekFrom::Start(0))?;
    let d = digest_reader(&mut *file, name)?;
    file.seek(SeekFrom::Start(0))?;
    Ok(d)
}

/// `/`-separated form of a path relative to the campaign folder.
pub fn slash_name(rel: &std::path::Path) -> String {
    let parts: Vec<String> = rel
        .components()
        .map(|c| c.as_os_str().to_string_lossy().into_owned())
        .collect();
    parts.join("/")
}
