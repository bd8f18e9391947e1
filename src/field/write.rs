//! Writing: the per-point rows of a chunk (estimated and formatted in one pass), number
//! formatting, the header, and the writer thread that hands the bytes to the caller's sink.

use super::align::{same_id, Cursor, Segment};
use super::parse::{shown, Layout};
use super::summary::{ColumnAcc, PointChecks};
use super::{give_back, pooled, FieldError, IdMismatch, Pool};
use crate::estimate::three_grid_fast::FastThreeGrid;
use crate::sink::PointSink;
use std::sync::mpsc::Receiver;

/// Formatted chunks the writer thread may hold ready.
pub(super) const WRITE_AHEAD: usize = 16;
/// Output buffers kept for reuse at most (the write-ahead and a round of chunks).
pub(super) const OUT_POOL_MAX: usize = 2 * WRITE_AHEAD;

/// Appends a number in the shortest form that reads back to the same double (Żmij, `zmij`),
/// plain from 1e-5 to below 1e16 and scientific outside (`1e16`, `2.5e-7`: no `+` in the
/// exponent), without a trailing `.0`. `v` is finite (the callers see to it; other values give
/// unspecified text, never a panic).
pub(super) fn push_num(buf: &mut Vec<u8>, v: f64) {
    let mut b = zmij::Buffer::new();
    let text = b.format_finite(v).as_bytes();
    let text = text.strip_suffix(b".0").unwrap_or(text);
    let plus = if v.abs() >= 1e15 {
        text.iter().position(|&c| c == b'+')
    } else {
        None
    };
    match plus {
        Some(i) => {
            buf.extend_from_slice(&text[..i]);
            buf.extend_from_slice(&text[i + 1..]);
        }
        None => buf.extend_from_slice(text),
    }
}

/// Appends a figure, or nothing (an empty cell) where it does not exist or is not finite
/// (an overflow near the largest doubles).
pub(super) fn push_opt(buf: &mut Vec<u8>, v: Option<f64>) {
    if let Some(v) = v.filter(|v| v.is_finite()) {
        push_num(buf, v);
    }
}

/// Appends one CSV field, quoted when it needs to be.
pub(super) fn push_field(buf: &mut Vec<u8>, text: &[u8]) {
    let needs = text
        .iter()
        .any(|&c| c == b',' || c == b'"' || c == b'\n' || c == b'\r')
        || text.first().is_some_and(|c| c.is_ascii_whitespace())
        || text.last().is_some_and(|c| c.is_ascii_whitespace());
    if needs {
        buf.push(b'"');
        for &c in text {
            if c == b'"' {
                buf.push(b'"');
            }
            buf.push(c);
        }
        buf.push(b'"');
    } else {
        buf.extend_from_slice(text);
    }
}

pub(super) fn header_bytes(columns: &[String]) -> Vec<u8> {
    let mut buf = b"id".to_vec();
    for c in columns {
        for suffix in ["", "_extrapolated", "_order", "_class", "_uncertainty"] {
            buf.push(b',');
            push_field(&mut buf, format!("{c}{suffix}").as_bytes());
        }
    }
    buf.push(b'\n');
    buf
}

/// The most bytes the per-point rows of `segs` can take, so that the output buffer is never
/// grown (and copied) while a chunk is written: an id quoted with every byte doubled, and per
/// column the finest value's text or a number, three numbers (at most 24 bytes each), a
/// class label and the separators.
pub(super) fn out_bound(segs: &[Segment], ncols: usize) -> usize {
    let mut bytes = 0;
    for (rows, a, b) in segs {
        if a < b {
            let span = |ends: &[usize], lo: usize, hi: usize| {
                let start = if lo == 0 { 0 } else { ends[lo - 1] };
                ends[hi - 1] - start
            };
            let rows_n = b - a;
            bytes += 2 * span(&rows.id_end, *a, *b) + 3 * rows_n;
            if rows.text_end.is_empty() {
                bytes += 24 * ncols * rows_n;
            } else {
                bytes += span(&rows.text_end, a * ncols, b * ncols);
            }
            bytes += (4 * 24 + 16) * ncols * rows_n;
        }
    }
    bytes
}

pub(super) struct Computed {
    pub(super) bytes: Vec<u8>,
    pub(super) accs: Vec<ColumnAcc>,
}

// Kept out of line so that profiles show parsing and estimating apart.
#[inline(never)]
pub(super) fn compute_chunk(
    fast: &FastThreeGrid,
    layouts: &[Layout],
    chunk: &[Vec<Segment>; 3],
    ncols: usize,
    checks: &PointChecks,
    write: Option<&Pool>,
) -> Result<Computed, FieldError> {
    let n: usize = chunk[0].iter().map(|s| s.2 - s.1).sum();
    let mut accs: Vec<ColumnAcc> = (0..ncols)
        .map(|_| ColumnAcc {
            orders: Vec::with_capacity(n),
            ..ColumnAcc::default()
        })
        .collect();
    let mut buf = match write {
        Some(pool) => pooled(pool, out_bound(&chunk[0], ncols)),
        None => Vec::new(),
    };
    let write = write.is_some();
    let mut cur = [
        Cursor::new(&chunk[0]),
        Cursor::new(&chunk[1]),
        Cursor::new(&chunk[2]),
    ];
    for _ in 0..n {
        let (Some((b0, i0)), Some((b1, i1)), Some((b2, i2))) =
            (cur[0].next_row(), cur[1].next_row(), cur[2].next_row())
        else {
            break;
        };
        let id = b0.id(i0);
        for (f, (b, i)) in [(1, (b1, i1)), (2, (b2, i2))] {
            if !same_id(b.id(i), id) {
                let l = &layouts[f];
                return Err(FieldError::IdMismatch(Box::new(IdMismatch {
                    path: l.path.clone(),
                    line: b.line(i),
                    column: l.header[l.id_idx].clone(),
                    found: shown(b.id(i)),
                    expected: shown(id),
                    expected_path: layouts[0].path.clone(),
                    expected_line: b0.line(i0),
                })));
            }
        }
        if write {
            if b0.plain_ids {
                buf.extend_from_slice(id);
            } else {
                push_field(&mut buf, id);
            }
        }
        for (c, acc) in accs.iter_mut().enumerate() {
            let phi = [b0.value(i0, c), b1.value(i1, c), b2.value(i2, c)];
            // (finite values never sum to NaN, even when the sum overflows: one test)
            if (phi[0] + phi[1] + phi[2]).is_nan() {
                // A value marked missing: no estimate, class `none`.
                acc.add_missing(id);
                if write {
                    buf.push(b',');
                    match b0.text(i0, c) {
                        Some(t) => buf.extend_from_slice(t),
                        None => push_opt(&mut buf, Some(phi[0])),
                    }
                    buf.extend_from_slice(b",,,none,");
                }
                continue;
            }
            let e = fast.estimate(phi);
            acc.add(&e, phi, id, checks);
            if write {
                buf.push(b',');
                match b0.text(i0, c) {
                    Some(t) => buf.extend_from_slice(t),
                    None => push_num(&mut buf, phi[0]),
                }
                buf.push(b',');
                push_opt(&mut buf, e.extrapolated);
                buf.push(b',');
                push_opt(&mut buf, e.observed_order);
                buf.push(b',');
                buf.extend_from_slice(e.convergence.label().as_bytes());
                buf.push(b',');
                push_opt(&mut buf, e.uncertainty);
            }
        }
        if write {
            buf.push(b'\n');
        }
    }
    Ok(Computed { bytes: buf, accs })
}

/// Writes what arrives, in order; the sink is handed back unfinished, for the caller to finish
/// only when the whole run succeeded.
pub(super) fn run_writer(
    mut sink: Box<dyn PointSink>,
    rx: Receiver<Vec<u8>>,
    pool: &Pool,
) -> std::io::Result<Box<dyn PointSink>> {
    for bytes in rx {
        sink.write_all(&bytes)?;
        give_back(pool, bytes, OUT_POOL_MAX);
    }
    Ok(sink)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_are_written_shortest_and_round_trip() {
        for v in [
            0.1 + 0.2,
            1e-7,
            1.5e300,
            -2.5,
            0.0,
            123456.789,
            1e16,
            9.999e-6,
        ] {
            let mut b = Vec::new();
            push_num(&mut b, v);
            let s = String::from_utf8(b).unwrap();
            assert_eq!(s.parse::<f64>().unwrap().to_bits(), v.to_bits(), "{s}");
            assert!(s.len() <= 24, "{s}");
        }
        // The written forms (the per-point file's documented notation).
        for (v, text) in [
            (2.0, "2"),
            (-0.0, "-0"),
            (1e16, "1e16"),
            (-1.2345678901234568e17, "-1.2345678901234568e17"),
            (1.5e300, "1.5e300"),
            (1e-7, "1e-7"),
            (0.00001, "0.00001"),
            (1e15, "1000000000000000"),
            (5e-324, "5e-324"),
        ] {
            let mut b = Vec::new();
            push_num(&mut b, v);
            assert_eq!(String::from_utf8(b).unwrap(), text);
        }
    }
}
