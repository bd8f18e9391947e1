//! Lining the three files up row by row: parsed blocks wait in one queue per file, chunks
//! take equal numbers of rows from each (shared blocks, no copying), and cursors walk them.

use super::parse::{Rows, RowsPool, ROWS_POOL_MAX};
use std::collections::VecDeque;
use std::sync::Arc;

/// Hands the blocks of finished chunks back to the pool where no one else holds them.
pub(super) fn recycle(pool: &RowsPool, chunks: &mut Vec<[Vec<Segment>; 3]>) {
    let Ok(mut p) = pool.lock() else {
        chunks.clear();
        return;
    };
    for chunk in chunks.drain(..) {
        for segs in chunk {
            for (rows, _, _) in segs {
                if p.len() < ROWS_POOL_MAX {
                    if let Ok(r) = Arc::try_unwrap(rows) {
                        p.push(r);
                    }
                }
            }
        }
    }
}

/// Rows `start..end` of a parsed block, shared between the queue and the chunks.
pub(super) type Segment = (Arc<Rows>, usize, usize);

/// Parsed rows of one file waiting to be lined up with the other files.
#[derive(Default)]
pub(super) struct Queue {
    pub(super) blocks: VecDeque<Arc<Rows>>,
    /// Rows of the front block already taken.
    pub(super) front: usize,
    pub(super) pending: usize,
    /// No more raw blocks will come.
    pub(super) eof: bool,
    /// Line of the last row taken (the header line before any).
    pub(super) last_line: u64,
}

impl Queue {
    pub(super) fn push(&mut self, rows: Rows) {
        if rows.len() > 0 {
            self.pending += rows.len();
            self.blocks.push_back(Arc::new(rows));
        }
    }

    pub(super) fn next_line(&self) -> Option<u64> {
        self.blocks.front().map(|b| b.line(self.front))
    }

    /// The next `n` rows (fewer when the queue runs short), without copying.
    pub(super) fn take(&mut self, n: usize) -> Vec<Segment> {
        let mut segs = Vec::new();
        let mut left = n;
        while left > 0 {
            let Some(front) = self.blocks.front() else {
                break;
            };
            let k = left.min(front.len() - self.front);
            segs.push((Arc::clone(front), self.front, self.front + k));
            self.front += k;
            left -= k;
            if self.front == front.len() {
                self.blocks.pop_front();
                self.front = 0;
            }
        }
        self.pending -= n - left;
        if let Some((rows, _, end)) = segs.last() {
            self.last_line = rows.line(end - 1);
        }
        segs
    }
}

/// Walks the rows of a list of segments.
pub(super) struct Cursor<'a> {
    pub(super) segs: &'a [Segment],
    pub(super) seg: usize,
    pub(super) row: usize,
}

impl<'a> Cursor<'a> {
    pub(super) fn new(segs: &'a [Segment]) -> Self {
        Cursor {
            segs,
            seg: 0,
            row: segs.first().map_or(0, |s| s.1),
        }
    }

    pub(super) fn next_row(&mut self) -> Option<(&'a Rows, usize)> {
        loop {
            let s = self.segs.get(self.seg)?;
            if self.row < s.2 {
                self.row += 1;
                return Some((&s.0, self.row - 1));
            }
            self.seg += 1;
            self.row = self.segs.get(self.seg).map_or(0, |s| s.1);
        }
    }
}

/// Whether two ids are equal: a byte loop, cheaper than a `memcmp` call for ids of a few bytes.
#[inline]
pub(super) fn same_id(a: &[u8], b: &[u8]) -> bool {
    a.len() == b.len() && a.iter().zip(b).all(|(x, y)| x == y)
}
