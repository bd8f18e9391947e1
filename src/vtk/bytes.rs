//! Scalar types, byte order, base64 and zlib blocks of VTK data arrays.

use std::io::Read;

use base64::engine::general_purpose::{GeneralPurpose, GeneralPurposeConfig};
use base64::engine::DecodePaddingMode;
use base64::Engine;

use super::Fault;

/// The largest capacity reserved up front from a size a file claims (the rest grows as data
/// actually arrive), so that a forged header cannot ask for gigabytes.
const RESERVE_LIMIT: usize = 1 << 24;

/// A VTK scalar type.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Scalar {
    I8,
    U8,
    I16,
    U16,
    I32,
    U32,
    I64,
    U64,
    F32,
    F64,
}

impl Scalar {
    /// The XML `type` attribute (`Float64`, `Int32`, …; the older `Float`/`Int` spellings of
    /// some writers are not VTK's and are refused by the caller's message).
    pub(crate) fn from_xml(name: &str) -> Option<Scalar> {
        Some(match name {
            "Int8" | "Char" => Scalar::I8,
            "UInt8" | "UChar" => Scalar::U8,
            "Int16" => Scalar::I16,
            "UInt16" => Scalar::U16,
            "Int32" => Scalar::I32,
            "UInt32" => Scalar::U32,
            "Int64" | "IdType" => Scalar::I64,
            "UInt64" => Scalar::U64,
            "Float32" => Scalar::F32,
            "Float64" => Scalar::F64,
            _ => return None,
        })
    }

    /// The legacy type word (`float`, `double`, `int`, `vtktypeint64`, …). `long` and
    /// `unsigned_long` are read as 8 bytes (the size on 64-bit Linux; from memory).
    pub(crate) fn from_legacy(name: &str) -> Option<Scalar> {
        Some(match name.to_ascii_lowercase().as_str() {
            "char" | "signed_char" | "vtktypeint8" => Scalar::I8,
            "unsigned_char" | "bit" | "vtktypeuint8" => Scalar::U8,
            "short" | "vtktypeint16" => Scalar::I16,
            "unsigned_short" | "vtktypeuint16" => Scalar::U16,
            "int" | "vtktypeint32" => Scalar::I32,
            "unsigned_int" | "vtktypeuint32" => Scalar::U32,
            "long" | "vtktypeint64" | "vtkidtype" => Scalar::I64,
            "unsigned_long" | "vtktypeuint64" => Scalar::U64,
            "float" | "vtktypefloat32" => Scalar::F32,
            "double" | "vtktypefloat64" => Scalar::F64,
            _ => return None,
        })
    }

    pub(crate) fn size(self) -> usize {
        match self {
            Scalar::I8 | Scalar::U8 => 1,
            Scalar::I16 | Scalar::U16 => 2,
            Scalar::I32 | Scalar::U32 | Scalar::F32 => 4,
            Scalar::I64 | Scalar::U64 | Scalar::F64 => 8,
        }
    }

    pub(crate) fn is_float(self) -> bool {
        matches!(self, Scalar::F32 | Scalar::F64)
    }
}

/// Decodes `count` values of `ty` from raw bytes (exactly `count × size` of them are used).
pub(crate) fn decode_values(
    raw: &[u8],
    ty: Scalar,
    count: usize,
    big_endian: bool,
) -> Result<Vec<f64>, Fault> {
    let size = ty.size();
    let need = count
        .checked_mul(size)
        .ok_or_else(|| Fault::new(format!("{count} values do not fit in memory")))?;
    if raw.len() < need {
        return Err(Fault::new(format!(
            "{} bytes of data where {count} values of {size} bytes need {need}",
            raw.len()
        )));
    }
    let mut out = Vec::with_capacity(count);
    for c in raw[..need].chunks_exact(size) {
        let mut b = [0u8; 8];
        b[..size].copy_from_slice(c);
        if big_endian {
            b[..size].reverse();
        }
        out.push(match ty {
            Scalar::I8 => f64::from(b[0] as i8),
            Scalar::U8 => f64::from(b[0]),
            Scalar::I16 => f64::from(i16::from_le_bytes([b[0], b[1]])),
            Scalar::U16 => f64::from(u16::from_le_bytes([b[0], b[1]])),
            Scalar::I32 => f64::from(i32::from_le_bytes([b[0], b[1], b[2], b[3]])),
            Scalar::U32 => f64::from(u32::from_le_bytes([b[0], b[1], b[2], b[3]])),
            Scalar::F32 => f64::from(f32::from_le_bytes([b[0], b[1], b[2], b[3]])),
            Scalar::I64 => i64::from_le_bytes(b) as f64,
            Scalar::U64 => u64::from_le_bytes(b) as f64,
            Scalar::F64 => f64::from_le_bytes(b),
        });
    }
    Ok(out)
}

/// Decodes `count` integers (indices, offsets, types) exactly; refuses negative values and
/// non-integral floats.
pub(crate) fn decode_indices(
    raw: &[u8],
    ty: Scalar,
    count: usize,
    big_endian: bool,
) -> Result<Vec<u64>, Fault> {
    if ty.is_float() {
        let v = decode_values(raw, ty, count, big_endian)?;
        return floats_to_indices(&v);
    }
    let size = ty.size();
    let need = count
        .checked_mul(size)
        .ok_or_else(|| Fault::new(format!("{count} values do not fit in memory")))?;
    if raw.len() < need {
        return Err(Fault::new(format!(
            "{} bytes of data where {count} values of {size} bytes need {need}",
            raw.len()
        )));
    }
    let signed = matches!(ty, Scalar::I8 | Scalar::I16 | Scalar::I32 | Scalar::I64);
    let mut out = Vec::with_capacity(count);
    for (i, c) in raw[..need].chunks_exact(size).enumerate() {
        let mut b = [0u8; 8];
        b[..size].copy_from_slice(c);
        if big_endian {
            b[..size].reverse();
        }
        let negative = signed && b[size - 1] & 0x80 != 0;
        if negative {
            return Err(Fault::new(format!("value {i} is negative")));
        }
        out.push(u64::from_le_bytes(b));
    }
    Ok(out)
}

/// One ASCII number: text of a 32-bit float type is rounded once, to the nearest `f32`.
pub(crate) fn parse_number(text: &str, ty: Scalar) -> Option<f64> {
    if ty == Scalar::F32 {
        text.parse::<f32>().ok().map(f64::from)
    } else {
        text.parse::<f64>().ok()
    }
}

pub(crate) fn floats_to_indices(v: &[f64]) -> Result<Vec<u64>, Fault> {
    v.iter()
        .enumerate()
        .map(|(i, &x)| {
            if x >= 0.0 && x.fract() == 0.0 && x < 1.8e19 {
                Ok(x as u64)
            } else {
                Err(Fault::new(format!(
                    "value {i} ({x}) is not a non-negative integer"
                )))
            }
        })
        .collect()
}

/// Base64 text that may be several padded segments in a row (VTK encodes a block header and
/// the data separately): each segment decoded, the bytes joined. Whitespace is ignored.
pub(crate) fn base64_decode(text: &[u8]) -> Result<Vec<u8>, Fault> {
    let engine = GeneralPurpose::new(
        &base64::alphabet::STANDARD,
        GeneralPurposeConfig::new().with_decode_padding_mode(DecodePaddingMode::Indifferent),
    );
    let clean: Vec<u8> = text
        .iter()
        .copied()
        .filter(|b| !b.is_ascii_whitespace())
        .collect();
    let mut out = Vec::with_capacity(clean.len() / 4 * 3);
    let mut start = 0;
    let mut i = 0;
    while i < clean.len() {
        if clean[i] == b'=' {
            let mut end = i;
            while end < clean.len() && clean[end] == b'=' {
                end += 1;
            }
            engine
                .decode_vec(&clean[start..end], &mut out)
                .map_err(|e| Fault::new(format!("bad base64 near character {start}: {e}")))?;
            start = end;
            i = end;
        } else {
            i += 1;
        }
    }
    if start < clean.len() {
        engine
            .decode_vec(&clean[start..], &mut out)
            .map_err(|e| Fault::new(format!("bad base64 near character {start}: {e}")))?;
    }
    Ok(out)
}

/// The layout of a binary data array's bytes.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Layout {
    pub header_u64: bool,
    pub big_endian: bool,
    pub zlib: bool,
}

impl Layout {
    fn header_size(self) -> usize {
        if self.header_u64 {
            8
        } else {
            4
        }
    }

    fn header_item(self, bytes: &[u8], index: usize) -> Result<u64, Fault> {
        let size = self.header_size();
        let start = index
            .checked_mul(size)
            .ok_or_else(|| Fault::new("block header too long"))?;
        let Some(c) = bytes.get(start..start.saturating_add(size)) else {
            return Err(Fault::at(
                format!("byte {start}"),
                "the data end inside the block header",
            ));
        };
        let mut b = [0u8; 8];
        b[..size].copy_from_slice(c);
        if self.big_endian {
            b[..size].reverse();
        }
        Ok(u64::from_le_bytes(b))
    }

    /// The payload of one binary array starting at `bytes[0]` (header and data, or the
    /// compressed block header and blocks). Returns the data bytes and how many input bytes
    /// were used.
    pub(crate) fn payload(self, bytes: &[u8]) -> Result<(Vec<u8>, usize), Fault> {
        let hs = self.header_size();
        if !self.zlib {
            let n = to_usize(self.header_item(bytes, 0)?)?;
            let end = hs
                .checked_add(n)
                .filter(|&e| e <= bytes.len())
                .ok_or_else(|| {
                    Fault::at(
                        format!("byte {hs}"),
                        format!(
                            "the header announces {n} bytes but {} follow",
                            bytes.len().saturating_sub(hs)
                        ),
                    )
                })?;
            return Ok((bytes[hs..end].to_vec(), end));
        }
        let blocks = to_usize(self.header_item(bytes, 0)?)?;
        let block_size = to_usize(self.header_item(bytes, 1)?)?;
        let last_size = to_usize(self.header_item(bytes, 2)?)?;
        if blocks > bytes.len() {
            return Err(Fault::at(
                "byte 0",
                format!(
                    "{blocks} compressed blocks announced in {} bytes",
                    bytes.len()
                ),
            ));
        }
        let mut pos = 3usize
            .checked_add(blocks)
            .and_then(|n| n.checked_mul(hs))
            .ok_or_else(|| Fault::new("block header too long"))?;
        let total = if blocks == 0 {
            0
        } else {
            (blocks - 1)
                .checked_mul(block_size)
                .and_then(|t| {
                    t.checked_add(if last_size == 0 {
                        block_size
                    } else {
                        last_size
                    })
                })
                .ok_or_else(|| Fault::new("the block sizes overflow"))?
        };
        let mut out = Vec::with_capacity(total.min(RESERVE_LIMIT));
        for k in 0..blocks {
            let csize = to_usize(self.header_item(bytes, 3 + k)?)?;
            let want = if k + 1 == blocks && last_size != 0 {
                last_size
            } else {
                block_size
            };
            let end = pos
                .checked_add(csize)
                .filter(|&e| e <= bytes.len())
                .ok_or_else(|| {
                    Fault::at(
                        format!("byte {pos}"),
                        format!("compressed block {k} of {csize} bytes runs past the data"),
                    )
                })?;
            let before = out.len();
            let mut dec = flate2::read::ZlibDecoder::new(&bytes[pos..end]);
            (&mut dec)
                .take(want as u64)
                .read_to_end(&mut out)
                .map_err(|e| {
                    Fault::at(
                        format!("byte {pos}"),
                        format!("compressed block {k} cannot be inflated: {e}"),
                    )
                })?;
            if out.len() - before != want {
                return Err(Fault::at(
                    format!("byte {pos}"),
                    format!(
                        "compressed block {k} inflates to {} bytes, the header says {want}",
                        out.len() - before
                    ),
                ));
            }
            pos = end;
        }
        Ok((out, pos))
    }
}

fn to_usize(v: u64) -> Result<usize, Fault> {
    usize::try_from(v).map_err(|_| Fault::new(format!("size {v} does not fit in memory")))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn base64_segments_are_joined() {
        // "AQ==" is [1], "AgM=" is [2, 3] (RFC 4648 alphabet, worked by hand).
        assert_eq!(base64_decode(b"AQ==\n AgM=").unwrap(), vec![1, 2, 3]);
        assert!(base64_decode(b"A*==").is_err());
    }

    #[test]
    fn integers_decode_in_both_byte_orders() {
        assert_eq!(
            decode_indices(&[0, 0, 1, 2], Scalar::I32, 1, true).unwrap(),
            vec![258]
        );
        assert_eq!(
            decode_indices(&[2, 1, 0, 0], Scalar::I32, 1, false).unwrap(),
            vec![258]
        );
        assert!(decode_indices(&[0xff; 4], Scalar::I32, 1, false).is_err());
        assert!(decode_values(&[0; 3], Scalar::F32, 1, false).is_err());
    }

    #[test]
    fn forged_block_counts_are_refused_without_allocating() {
        let layout = Layout {
            header_u64: true,
            big_endian: false,
            zlib: true,
        };
        let mut b = u64::MAX.to_le_bytes().to_vec();
        b.extend_from_slice(&[0; 16]);
        assert!(layout.payload(&b).is_err());
    }
}
