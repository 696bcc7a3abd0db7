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
    fn paths_are_normalised_lexically() {
        let n = |s: &str| normalised(std::path::Path::new(s));
        assert_eq!(n("sample-data/../rules/a.yaml"), "rules/a.yaml");
        assert_eq!(n("./a/./b.csv"), "a/b.csv");
        assert_eq!(n("../x/../../y"), "../../y");
        assert_eq!(n("/a/../../b"), "/b");
        assert_eq!(n("a/.."), ".");
    }
}
