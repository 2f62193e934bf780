//! A spectrum's points as stored: little-endian f64 (x, y) pairs, 16 bytes a point, an exact
//! round trip; a BLOB that is not a whole number of points is refused.

use crate::error::{Error, Result};

/// Encodes (x, y) pairs as little-endian f64 pairs: 16 bytes a point, exact round trip.
pub fn encode_xy(x: &[f64], y: &[f64]) -> Vec<u8> {
    let mut out = Vec::with_capacity(x.len() * 16);
    for (a, b) in x.iter().zip(y) {
        out.extend_from_slice(&a.to_le_bytes());
        out.extend_from_slice(&b.to_le_bytes());
    }
    out
}

/// Decodes what [`encode_xy`] wrote.
pub fn decode_xy(blob: &[u8]) -> Result<(Vec<f64>, Vec<f64>)> {
    if !blob.len().is_multiple_of(16) {
        return Err(Error::Invalid(format!(
            "spectrum data of {} bytes is not a whole number of points",
            blob.len()
        )));
    }
    let n = blob.len() / 16;
    let mut x = Vec::with_capacity(n);
    let mut y = Vec::with_capacity(n);
    for c in blob.chunks_exact(16) {
        let mut a = [0u8; 8];
        let mut b = [0u8; 8];
        a.copy_from_slice(&c[..8]);
        b.copy_from_slice(&c[8..]);
        x.push(f64::from_le_bytes(a));
        y.push(f64::from_le_bytes(b));
    }
    Ok((x, y))
}
