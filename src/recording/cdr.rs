//! A reader for CDR-encoded ROS 2 message payloads (OMG Common Data Representation, plain
//! XCDR version 1 as ROS 2 middlewares write it; DDS-XTypes 1.3, section 7.4).
//!
//! Layout rules followed here:
//! - a 4-byte encapsulation header: `0x00 0x01` little-endian CDR, `0x00 0x00` big-endian CDR,
//!   then two option bytes (ignored);
//! - every primitive is aligned to its own size (1, 2, 4 or 8 bytes), measured from the first
//!   byte after the header; padding bytes are skipped, whatever their value;
//! - a string is a `u32` length that counts the terminating NUL, then the bytes and the NUL;
//! - a sequence is a `u32` element count, then the elements; a fixed-size array has no count.
//!
//! The reader never trusts a count from the payload to size an allocation: a count is checked
//! against the bytes left before anything is read.

/// Why a payload could not be decoded.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CdrError {
    #[error("payload has {len} bytes, fewer than the 4-byte CDR encapsulation header")]
    NoHeader { len: usize },
    #[error(
        "encapsulation {0:#04x} {1:#04x} is not plain CDR (expected 0x00 0x01 little-endian or 0x00 0x00 big-endian)"
    )]
    Encapsulation(u8, u8),
    #[error("payload ends at byte {len} of the body, {need} more bytes were needed at byte {at}")]
    Truncated { at: usize, need: usize, len: usize },
    #[error("string at byte {at} is not terminated by a NUL byte")]
    Unterminated { at: usize },
    #[error("string at byte {at} is not UTF-8")]
    NotUtf8 { at: usize },
    #[error("count {count} at byte {at} needs more bytes than the {left} left in the payload")]
    Count { at: usize, count: u64, left: usize },
}

/// A cursor over one CDR payload.
#[derive(Debug, Clone)]
pub struct CdrReader<'a> {
    /// The body: everything after the encapsulation header. Alignment is relative to its start.
    body: &'a [u8],
    pos: usize,
    little_endian: bool,
}

impl<'a> CdrReader<'a> {
    /// Checks the encapsulation header and positions the cursor on the first byte of the body.
    pub fn new(payload: &'a [u8]) -> Result<CdrReader<'a>, CdrError> {
        let (Some(&kind_hi), Some(&kind_lo), Some(body)) = (payload.first(), payload.get(1), payload.get(4..)) else {
            return Err(CdrError::NoHeader { len: payload.len() });
        };
        let little_endian = match (kind_hi, kind_lo) {
            (0x00, 0x01) => true,
            (0x00, 0x00) => false,
            (a, b) => return Err(CdrError::Encapsulation(a, b)),
        };
        Ok(CdrReader { body, pos: 0, little_endian })
    }

    /// True for a little-endian payload.
    pub fn little_endian(&self) -> bool {
        self.little_endian
    }

    /// Position in the body (bytes after the encapsulation header).
    pub fn position(&self) -> usize {
        self.pos
    }

    /// Bytes left after the cursor.
    pub fn remaining(&self) -> usize {
        self.body.len().saturating_sub(self.pos)
    }

    /// Moves the cursor to the next multiple of `size` (a power of two: 1, 2, 4 or 8).
    fn align(&mut self, size: usize) {
        let misalign = self.pos % size;
        if misalign != 0 {
            self.pos += size - misalign;
        }
    }

    fn take(&mut self, n: usize) -> Result<&'a [u8], CdrError> {
        let end = self.pos.checked_add(n).filter(|&e| e <= self.body.len());
        match end.and_then(|e| self.body.get(self.pos..e)) {
            Some(bytes) => {
                self.pos += n;
                Ok(bytes)
            }
            None => Err(CdrError::Truncated { at: self.pos, need: n, len: self.body.len() }),
        }
    }

    /// Aligns to `N` and reads `N` bytes.
    /// Aligns to `N` and reads `N` bytes in native order.
    fn primitive<const N: usize>(&mut self) -> Result<[u8; N], CdrError> {
        self.align(N);
        let mut out = [0u8; N];
        out.copy_from_slice(self.take(N)?);
        if self.little_endian != cfg!(target_endian = "little") {
            out.reverse();
        }
        Ok(out)
    }

    pub fn u8(&mut self) -> Result<u8, CdrError> {
        Ok(self.primitive::<1>()?[0])
    }

    pub fn i8(&mut self) -> Result<i8, CdrError> {
        Ok(i8::from_ne_bytes(self.primitive::<1>()?))
    }

    /// A boolean: one byte, nonzero is true.
    pub fn bool(&mut self) -> Result<bool, CdrError> {
        Ok(self.u8()? != 0)
    }

    pub fn u16(&mut self) -> Result<u16, CdrError> {
        Ok(u16::from_ne_bytes(self.primitive::<2>()?))
    }

    pub fn i16(&mut self) -> Result<i16, CdrError> {
        Ok(i16::from_ne_bytes(self.primitive::<2>()?))
    }

    pub fn u32(&mut self) -> Result<u32, CdrError> {
        Ok(u32::from_ne_bytes(self.primitive::<4>()?))
    }

    pub fn i32(&mut self) -> Result<i32, CdrError> {
        Ok(i32::from_ne_bytes(self.primitive::<4>()?))
    }

    pub fn u64(&mut self) -> Result<u64, CdrError> {
        Ok(u64::from_ne_bytes(self.primitive::<8>()?))
    }

    pub fn i64(&mut self) -> Result<i64, CdrError> {
        Ok(i64::from_ne_bytes(self.primitive::<8>()?))
    }

    pub fn f32(&mut self) -> Result<f32, CdrError> {
        Ok(f32::from_ne_bytes(self.primitive::<4>()?))
    }

    pub fn f64(&mut self) -> Result<f64, CdrError> {
        Ok(f64::from_ne_bytes(self.primitive::<8>()?))
    }

    /// A string: `u32` length including the terminating NUL, the bytes, the NUL. A length of 0
    /// (written by some middlewares for an empty string) is read as the empty string.
    pub fn string(&mut self) -> Result<String, CdrError> {
        let len = self.u32()?;
        let at = self.pos;
        let len = self.count_len(len, 1, at)?;
        if len == 0 {
            return Ok(String::new());
        }
        let bytes = self.take(len)?;
        let Some((&0, text)) = bytes.split_last() else {
            return Err(CdrError::Unterminated { at });
        };
        std::str::from_utf8(text).map(str::to_string).map_err(|_| CdrError::NotUtf8 { at })
    }

    /// A sequence's element count, checked against the bytes left (each element takes at least
    /// `min_element_bytes`), so a corrupt count cannot drive a long loop or a large allocation.
    pub fn sequence_len(&mut self, min_element_bytes: usize) -> Result<usize, CdrError> {
        let count = self.u32()?;
        let at = self.pos;
        self.count_len(count, min_element_bytes, at)
    }

    /// Checks that `count` elements of at least `min_element_bytes` each fit in what is left.
    pub fn check_count(&self, count: u64, min_element_bytes: usize) -> Result<usize, CdrError> {
        let left = self.remaining();
        let need = count.saturating_mul(min_element_bytes.max(1) as u64);
        match usize::try_from(count) {
            Ok(n) if need <= left as u64 => Ok(n),
            _ => Err(CdrError::Count { at: self.pos, count, left }),
        }
    }

    fn count_len(&self, count: u32, min_element_bytes: usize, at: usize) -> Result<usize, CdrError> {
        self.check_count(u64::from(count), min_element_bytes).map_err(|e| match e {
            CdrError::Count { count, left, .. } => CdrError::Count { at, count, left },
            other => other,
        })
    }
}

#[cfg(test)]
mod tests {
    //! Payloads built by hand following the layout rules of the OMG Common Data Representation
    //! (DDS-XTypes 1.3, section 7.4: XCDR1 encapsulation header, primitives aligned to their size
    //! from the start of the body, strings as u32 length with NUL, sequences as u32 count).
    use super::*;
    use approx::assert_relative_eq;

    const LE: [u8; 4] = [0x00, 0x01, 0x00, 0x00];
    const BE: [u8; 4] = [0x00, 0x00, 0x00, 0x00];

    #[test]
    fn alignment_after_a_string() {
        // OMG CDR (DDS-XTypes 1.3, 7.4): string "abc" = u32 length 4 (3 bytes + NUL) at body
        // offset 0, bytes at 4..8; the next float64 aligns from offset 8 (already aligned);
        // string "ab" = length 3 at 0, bytes at 4..7, so a float64 after it starts at 8 (one
        // padding byte), and a u16 after "ab" starts at 8 as well (7 rounded up to 2).
        let mut p = LE.to_vec();
        p.extend_from_slice(&3u32.to_le_bytes());
        p.extend_from_slice(b"ab\0");
        p.push(0xAA); // padding to offset 8: any value
        p.extend_from_slice(&2.5f64.to_le_bytes());
        p.extend_from_slice(&7u16.to_le_bytes());
        let mut r = CdrReader::new(&p).expect("header");
        assert_eq!(r.string().expect("string"), "ab");
        assert_eq!(r.position(), 7);
        assert_relative_eq!(r.f64().expect("f64"), 2.5, epsilon = 0.0);
        assert_eq!(r.position(), 16);
        assert_eq!(r.u16().expect("u16"), 7);
        assert_eq!(r.remaining(), 0);
    }

    #[test]
    fn sequence_of_float64_after_a_byte() {
        // OMG CDR: u8 at 0, padding to 4, u32 count 3 at 4..8, float64 elements at 8, 16, 24.
        let mut p = LE.to_vec();
        p.push(9);
        p.extend_from_slice(&[0, 0, 0]);
        p.extend_from_slice(&3u32.to_le_bytes());
        for x in [1.0f64, -2.0, 0.125] {
            p.extend_from_slice(&x.to_le_bytes());
        }
        let mut r = CdrReader::new(&p).expect("header");
        assert_eq!(r.u8().expect("u8"), 9);
        let n = r.sequence_len(8).expect("count");
        assert_eq!(n, 3);
        let xs: Vec<f64> = (0..n).map(|_| r.f64().expect("element")).collect();
        assert_eq!(xs, vec![1.0, -2.0, 0.125]);
    }

    #[test]
    fn big_endian_flag() {
        // OMG CDR: encapsulation 0x00 0x00 = big-endian; int32 -2 then float64 1.5 at offset 8.
        let mut p = BE.to_vec();
        p.extend_from_slice(&(-2i32).to_be_bytes());
        p.extend_from_slice(&[0, 0, 0, 0]);
        p.extend_from_slice(&1.5f64.to_be_bytes());
        let mut r = CdrReader::new(&p).expect("header");
        assert!(!r.little_endian());
        assert_eq!(r.i32().expect("i32"), -2);
        assert_relative_eq!(r.f64().expect("f64"), 1.5, epsilon = 0.0);
        // The same bytes read as little-endian give something else.
        p[1] = 0x01;
        let mut r = CdrReader::new(&p).expect("header");
        assert_ne!(r.i32().expect("i32"), -2);
    }

    #[test]
    fn fixed_array_float64_36_has_no_count() {
        // OMG CDR: a fixed array float64[36] is 36 aligned float64 with no length prefix; a u32
        // before it at 0..4 leaves 4 bytes of padding, so the array occupies 8..296.
        let mut p = LE.to_vec();
        p.extend_from_slice(&5u32.to_le_bytes());
        p.extend_from_slice(&[0; 4]);
        for k in 0..36 {
            p.extend_from_slice(&(k as f64 * 0.5).to_le_bytes());
        }
        let mut r = CdrReader::new(&p).expect("header");
        assert_eq!(r.u32().expect("u32"), 5);
        let xs: Vec<f64> = (0..36).map(|_| r.f64().expect("element")).collect();
        assert_relative_eq!(xs[35], 17.5, epsilon = 0.0);
        assert_eq!(r.position(), 8 + 36 * 8);
        assert_eq!(r.remaining(), 0);
    }

    #[test]
    fn bad_payloads_are_errors() {
        assert!(matches!(CdrReader::new(&[0, 1]), Err(CdrError::NoHeader { len: 2 })));
        assert!(matches!(CdrReader::new(&[0, 3, 0, 0]), Err(CdrError::Encapsulation(0, 3))));
        let mut r = CdrReader::new(&[0, 1, 0, 0, 1, 2]).expect("header");
        assert!(matches!(r.f64(), Err(CdrError::Truncated { .. })));
        // A string without its NUL.
        let mut p = LE.to_vec();
        p.extend_from_slice(&2u32.to_le_bytes());
        p.extend_from_slice(b"ab");
        assert!(matches!(CdrReader::new(&p).expect("header").string(), Err(CdrError::Unterminated { at: 4 })));
        // A count far beyond the payload is refused before any loop runs.
        let mut p = LE.to_vec();
        p.extend_from_slice(&u32::MAX.to_le_bytes());
        let e = CdrReader::new(&p).expect("header").sequence_len(8).expect_err("huge count");
        assert!(matches!(e, CdrError::Count { count: 4294967295, left: 0, .. }), "{e}");
        // Zero-length strings are the empty string.
        let mut p = LE.to_vec();
        p.extend_from_slice(&0u32.to_le_bytes());
        assert_eq!(CdrReader::new(&p).expect("header").string().expect("empty"), "");
    }
}
