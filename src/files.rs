//! Reading input files safely: regular files only (a FIFO would block, a
//! device such as `/dev/zero` never ends), reads capped while reading (not
//! from the size the metadata claims), and SHA-256 of exactly the bytes read.

use crate::digest::hex;
use crate::error::InputError;
use sha2::{Digest, Sha256};
use std::fs::File;
use std::io::{BufRead, Read};
use std::path::Path;

/// Opens `path` for reading when it is a regular file (links are followed
/// to their target, which must be a regular file too).
pub fn open_regular(path: &Path, what: &str) -> Result<File, InputError> {
    let meta = std::fs::metadata(path).map_err(|e| {
        InputError::new(path, format!("cannot open {what}: {e}"))
            .hint("check the path (plan paths are relative to the plan file)")
    })?;
    if !meta.is_file() {
        let kind = if meta.is_dir() {
            "a directory"
        } else {
            "not a regular file (a device, FIFO or socket)"
        };
        return Err(InputError::new(path, format!("the {what} is {kind}"))
            .hint("give the path of a regular file"));
    }
    File::open(path).map_err(|e| InputError::new(path, format!("cannot open {what}: {e}")))
}

/// Reads a regular file of at most `max` bytes; a longer one is refused
/// as soon as the limit is passed.
pub fn read_capped(path: &Path, what: &str, max: u64) -> Result<Vec<u8>, InputError> {
    let f = open_regular(path, what)?;
    let mut out = Vec::new();
    f.take(max + 1)
        .read_to_end(&mut out)
        .map_err(|e| InputError::new(path, format!("cannot read {what}: {e}")))?;
    if out.len() as u64 > max {
        return Err(InputError::new(
            path,
            format!("the {what} is larger than the limit of {max} bytes"),
        )
        .hint("is this the right file? The limits are listed in the README"));
    }
    Ok(out)
}

/// A reader that hashes every byte it hands out.
pub struct Hashing<R> {
    inner: R,
    hash: Sha256,
    bytes: u64,
}

impl<R: Read> Hashing<R> {
    pub fn new(inner: R) -> Self {
        Hashing {
            inner,
            hash: Sha256::new(),
            bytes: 0,
        }
    }
    /// Reads and hashes the rest (so that the digest covers the whole input).
    pub fn finish(mut self) -> std::io::Result<(String, u64)> {
        let mut buf = vec![0u8; 1 << 16];
        loop {
            let n = self.read(&mut buf)?;
            if n == 0 {
                break;
            }
        }
        Ok((hex(&self.hash.finalize()), self.bytes))
    }
    pub fn bytes(&self) -> u64 {
        self.bytes
    }
    /// The reader and the digest state of what was read through it.
    pub fn into_parts(self) -> (R, Sha256, u64) {
        (self.inner, self.hash, self.bytes)
    }
    /// The digest of the bytes read so far (reading goes on).
    pub fn digest_so_far(&self) -> String {
        hex(&self.hash.clone().finalize())
    }
}

/// Buffered reading hashes what is consumed (the same bytes once, whether
/// taken with `read` or with `fill_buf`/`consume`).
impl<R: BufRead> BufRead for Hashing<R> {
    fn fill_buf(&mut self) -> std::io::Result<&[u8]> {
        self.inner.fill_buf()
    }
    fn consume(&mut self, amt: usize) {
        if let Ok(b) = self.inner.fill_buf() {
            let n = amt.min(b.len());
            self.hash.update(&b[..n]);
            self.bytes += n as u64;
        }
        self.inner.consume(amt);
    }
}

impl<R: Read> Read for Hashing<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.hash.update(&buf[..n]);
        self.bytes += n as u64;
        Ok(n)
    }
}

/// A file read and hashed on a thread of its own, up to two chunks ahead of
/// its consumer, which gets the bytes through [`Read`] and [`BufRead`]: the
/// decoding thread no longer waits for the reading nor spends its time on
/// the SHA-256. The digest covers every byte of the file whatever the
/// consumer took ([`HashedAhead::finish`]).
pub struct HashedAhead {
    chunks: std::sync::mpsc::Receiver<std::io::Result<Vec<u8>>>,
    back: std::sync::mpsc::Sender<Vec<u8>>,
    current: Vec<u8>,
    pos: usize,
    reader: Option<std::thread::JoinHandle<(Sha256, u64)>>,
}

/// Bytes the reading thread hands over at a time.
const AHEAD_CHUNK: usize = 1 << 20;

impl HashedAhead {
    /// Starts reading `file` from where it stands, continuing `hash`, which
    /// holds the digest state of the `bytes` read before.
    pub fn start(mut file: File, mut hash: Sha256, mut bytes: u64) -> Self {
        let (tx, chunks) = std::sync::mpsc::sync_channel::<std::io::Result<Vec<u8>>>(2);
        let (back, recycled) = std::sync::mpsc::channel::<Vec<u8>>();
        let reader = std::thread::spawn(move || {
            loop {
                let mut buf = recycled
                    .try_recv()
                    .unwrap_or_else(|_| Vec::with_capacity(AHEAD_CHUNK));
                buf.clear();
                match (&mut file).take(AHEAD_CHUNK as u64).read_to_end(&mut buf) {
                    Ok(0) => break,
                    Ok(n) => {
                        hash.update(&buf[..n]);
                        bytes += n as u64;
                        if tx.send(Ok(buf)).is_err() {
                            break;
                        }
                    }
                    Err(e) => {
                        let _ = tx.send(Err(e));
                        break;
                    }
                }
            }
            (hash, bytes)
        });
        HashedAhead {
            chunks,
            back,
            current: Vec::new(),
            pos: 0,
            reader: Some(reader),
        }
    }

    /// Reads (and hashes) the rest and returns the digest of the whole file
    /// and its length.
    pub fn finish(mut self) -> std::io::Result<(String, u64)> {
        for chunk in self.chunks.iter() {
            chunk?;
        }
        match self.reader.take().map(std::thread::JoinHandle::join) {
            Some(Ok((hash, bytes))) => Ok((hex(&hash.finalize()), bytes)),
            _ => Err(std::io::Error::other("the reading thread stopped")),
        }
    }
}

impl BufRead for HashedAhead {
    fn fill_buf(&mut self) -> std::io::Result<&[u8]> {
        if self.pos == self.current.len() {
            match self.chunks.recv() {
                Ok(Ok(next)) => {
                    let done = std::mem::replace(&mut self.current, next);
                    let _ = self.back.send(done);
                    self.pos = 0;
                }
                Ok(Err(e)) => return Err(e),
                // The reading thread has finished: the end of the file.
                Err(_) => return Ok(&[]),
            }
        }
        Ok(&self.current[self.pos..])
    }

    fn consume(&mut self, amt: usize) {
        self.pos = (self.pos + amt).min(self.current.len());
    }
}

impl Read for HashedAhead {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let have = self.fill_buf()?;
        let n = have.len().min(buf.len());
        buf[..n].copy_from_slice(&have[..n]);
        self.consume(n);
        Ok(n)
    }
}

/// A path as results name it: `.` and `folder/..` removed lexically (links
/// are not resolved), `/` between the parts on every system.
pub fn normalised(path: &Path) -> String {
    use std::path::Component;
    let mut parts: Vec<String> = Vec::new();
    let mut root = String::new();
    for c in path.components() {
        match c {
            Component::Prefix(p) => root = p.as_os_str().to_string_lossy().into_owned(),
            Component::RootDir => root.push('/'),
            Component::CurDir => {}
            Component::ParentDir => match parts.last() {
                Some(last) if last != ".." => {
                    parts.pop();
                }
                // Above the root there is nothing to go up to.
                _ if !root.is_empty() => {}
                _ => parts.push("..".into()),
            },
            Component::Normal(n) => parts.push(n.to_string_lossy().into_owned()),
        }
    }
    let body = parts.join("/");
    match (root.is_empty(), body.is_empty()) {
        (true, true) => ".".into(),
        (true, false) => body,
        (false, _) => root + &body,
    }
}

#[cfg(test)]
mod tests {
    use super::normalised;
    use super::*;

    #[test]
    fn hashes_what_it_reads() {
        // FIPS 180-2, Appendix B.1: SHA-256("abc").
        let mut h = Hashing::new(&b"abc"[..]);
        let mut one = [0u8; 1];
        h.read_exact(&mut one).unwrap();
        let (d, n) = h.finish().unwrap();
        assert_eq!(n, 3);
        assert_eq!(
            d,
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }

    #[test]
    fn read_ahead_hands_out_every_byte_and_hashes_the_whole_file() {
        // FIPS 180-2, Appendix B.3: SHA-256 of one million 'a' (under one
        // chunk), then 2.5 million bytes (three chunks) against the
        // synchronous reader.
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("a.bin");
        std::fs::write(&path, vec![b'a'; 1_000_000]).unwrap();
        let ahead = HashedAhead::start(File::open(&path).unwrap(), Sha256::new(), 0);
        let (d, n) = ahead.finish().unwrap();
        assert_eq!(n, 1_000_000);
        assert_eq!(
            d,
            "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0"
        );
        let data: Vec<u8> = (0..2_500_000u32).map(|i| (i * 7 % 251) as u8).collect();
        std::fs::write(&path, &data).unwrap();
        // A prefix read by the caller, odd read sizes, BufRead in between.
        let mut h = Hashing::new(File::open(&path).unwrap());
        let mut prefix = [0u8; 100];
        h.read_exact(&mut prefix).unwrap();
        let (f, hash, bytes) = h.into_parts();
        let mut r = HashedAhead::start(f, hash, bytes);
        let mut got = prefix.to_vec();
        let mut buf = vec![0u8; 70_001];
        loop {
            let n = r.read(&mut buf).unwrap();
            if n == 0 {
                break;
            }
            got.extend_from_slice(&buf[..n]);
            let more = r.fill_buf().unwrap().len().min(3);
            got.extend_from_slice(&r.fill_buf().unwrap()[..more]);
            r.consume(more);
        }
        assert!(got == data);
        let want = Hashing::new(&data[..]).finish().unwrap();
        assert_eq!(r.finish().unwrap(), want);
        // Stopping early still gives the digest of the whole file.
        let mut r = HashedAhead::start(File::open(&path).unwrap(), Sha256::new(), 0);
        r.read_exact(&mut buf[..10]).unwrap();
        assert_eq!(r.finish().unwrap(), want);
    }

    #[test]
    fn paths_are_normalised_lexically() {
        let n = |s: &str| normalised(std::path::Path::new(s));
        assert_eq!(n("sample-data/../rules/a.yaml"), "rules/a.yaml");
        assert_eq!(n("./a/./b.csv"), "a/b.csv");
        assert_eq!(n("../x/../../y"), "../../y");
        assert_eq!(n("/a/../../b"), "/b");
        assert_eq!(n("a/.."), ".");
    }
}
