//! Pointwise uncertainty over whole fields: the three-mesh estimate of
//! [`three_grid`](crate::estimate::three_grid) at every probe of a probe file, streamed and
//! parallel.
//!
//! Each of the three finest meshes gives one CSV file of probes (an id column and one column
//! per quantity). The files hold the same probes in the same order. [`assess_field_with`] reads
//! the three files in lockstep, in blocks, parses the blocks in parallel, estimates every point
//! in parallel chunks and hands the per-point results in the order of the input to a sink, so
//! that memory stays constant in the number of points.
//!
//! # Pipeline
//! Probe files are opened with [`crate::input::open_regular`]: without blocking, and only
//! when they are regular files (a FIFO or a device is refused with an error naming it).
//! One reader thread per file (`read`) reads raw blocks of whole records (cut at the last line
//! end outside double quotes) a few blocks ahead. The calling thread gathers a round of blocks
//! and parses them in parallel (rayon) while the chunks lined up in the round before are
//! estimated and formatted in parallel (`write`); it then hands the formatted bytes in order to
//! a writer thread and lines the three files up row by row into the next chunks (`align`:
//! shared blocks, no copying). Memory is bounded by the read-ahead, two rounds of rows and the
//! write-ahead.
//!
//! Blocks without double quotes go to a one-pass parser (`parse`) that reads the needed numbers
//! in place (`fast-float2`, the grammar of `str::parse::<f64>`) and takes only well-formed
//! records; a block with anything else (a blank line, a bad number, a wrong field count, a lone
//! carriage return) is read again by a splitter that words the errors, and blocks with quotes
//! by the csv crate. Numbers are written by Żmij (`zmij`), in the shortest form that reads back.
//! The estimate at each point is [`FastThreeGrid`] (in
//! [`estimate::three_grid_fast`](crate::estimate::three_grid_fast)), which gives the figures of
//! [`three_grid::estimate`](crate::estimate::three_grid::estimate) without a root search per
//! point.
//!
//! # Writing
//! The library creates no file. The per-point bytes go, in input order, to the
//! [`PointSink`] the caller hands in (a writer thread calls its `write_all`); the sink is
//! finished (`PointSink::finish`) only when the whole field succeeded, and on any error it is
//! dropped unfinished. Where the bytes end up, and when a file becomes visible, is the caller's
//! decision: the command line stages each per-point file in a temporary file beside its target
//! and publishes all of them only after the whole run succeeded (see `cli/src/point_file.rs`),
//! so no reader ever sees a half-written file and a failed run leaves the older files as they
//! were.
//!
//! # Per-point file (contract)
//! Header `id`, then for each column `c`: `c` (the finest mesh's value, as its file gives it),
//! `c_extrapolated`, `c_order`, `c_class`, `c_uncertainty` (absolute). Empty cells where a
//! figure does not exist (or overflows, near the largest doubles). Computed numbers are written
//! in the shortest form that reads back to the same double (plain notation from 1e-5 to 1e16,
//! scientific notation outside). Ids are written back trimmed, quoted where CSV needs it.
//!
//! # Summary (contract)
//! Per column: the count of each convergence class; the mean and median observed order over the
//! points that have one and demonstrate convergence (`order_points` of them: an order on an end
//! of the search, or a point below order 0.5 or with R = ε21/ε32 > 0.9, is left out, as in
//! `assess::govern`); the warnings of the points per code with the ids of the first five
//! (`point_warnings`, the codes of [`FIELD_CODES`]); the mean and largest relative uncertainty `U/|φ1|` over the points that
//! have an uncertainty and a nonzero finest value (divergent points and points with φ1 = 0 are
//! left out; no-change points count with 0), and the count of points whose uncertainty `U` or
//! `U/|φ1|` overflows (`overflowed`: left out of the relative figures, they count as failures
//! for the acceptance limits and raise a warning). The median comes from a fixed histogram of
//! 20 000 bins over `(0, order_max]`, each bin keeping its count and sum: the reported
//! median is the mean of the values in the bin holding the middle rank (the mean of two bins for
//! an even count), so it lies within one bin width (`order_max / 20 000`, 0.001 for the
//! default cap of 20) of the exact median, and is exact when the middle bin holds equal values.
//!
//! Numerical uncertainty is not model-test acceptance: defer to the applicable test codes and
//! licensed engineering judgment.

mod align;
mod measure;
pub mod merge;
mod mesh;
mod parse;
pub mod profile;
mod read;
mod summary;
mod write;

pub use crate::estimate::three_grid_fast::{FastThreeGrid, PointEstimate};
pub use mesh::{is_vtk, is_vtu, CLASS_CODES};
pub use summary::{
    ClassCounts, ClassShares, ColumnSummary, FieldSetup, FieldSummary, PointChecks,
    TransferFigures, FIELD_CODES, TRANSFER_SHARE,
};

use crate::estimate::three_grid::ThreeGridSettings;
use crate::sink::PointSink;
use align::{recycle, Queue, Segment};
use parse::{parse_block, Layout, RowsPool};
use rayon::prelude::*;
use read::{run_reader, BlockReader, RawBlock, RAW_POOL_MAX, READ_AHEAD};
use std::path::PathBuf;
use std::sync::mpsc::{sync_channel, Receiver, SyncSender};
use std::sync::Arc;
use summary::{ColumnAcc, ORDER_BINS};
use write::{compute_chunk, header_bytes, run_writer, WRITE_AHEAD};

/// Rows per parallel chunk by default.
pub(crate) const DEFAULT_CHUNK_ROWS: usize = 4_096;
/// Bytes per raw read block by default.
pub(crate) const DEFAULT_BLOCK_BYTES: usize = 256 << 10;

/// One field of probes to assess: the plain form the study reader fills in.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldSpec {
    /// Name of the field (the key under `fields`).
    pub name: String,
    /// Name of the id column; `None` means the first column of each file.
    pub id: Option<String>,
    /// Quantities to estimate at every probe.
    pub columns: Vec<String>,
    /// The three finest meshes' probe files, finest first, paths already resolved.
    pub files: Vec<PathBuf>,
    /// Where to write the per-point results, if anywhere.
    pub write: Option<PathBuf>,
    /// How the probe files are read (separator, decimal mark, column mapping and scales).
    pub reading: FieldReading,
    /// For VTK files: a CSV of probe points (`x`, `y`, optional `z` and `id`) to estimate at
    /// instead of the finest mesh's points.
    pub probe_points: Option<PathBuf>,
    /// How the per-point estimate is made (global order, noise floor, a line, reference
    /// points); the default is the per-point order without a floor.
    pub estimate: FieldEstimate,
}

/// Which order the per-point estimates use (the study's `order` key of a field).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum OrderBasis {
    /// Each point's own observed order (default).
    #[default]
    PerPoint,
    /// One order for every point: the mean of the points' observed orders over the points
    /// that converge monotonically (Celik et al. 2008; Phillips & Roy 2014, from memory).
    Average,
    /// One order from the L2 norms of the differences between meshes (Stern et al. 2001).
    NormL2,
    /// One order from the L∞ norms of the differences between meshes (Stern et al. 2001).
    NormMax,
}

/// How a field's per-point estimate is made beyond the study's settings.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct FieldEstimate {
    /// Which order the points use.
    pub order: OrderBasis,
    /// Absolute noise floor: differences no larger count as round-off (0 = off).
    pub noise_floor: f64,
    /// A line to sample the results along (fields on meshes or probe sets).
    pub line: Option<profile::LineSpec>,
    /// Reference data at points, compared after ASME V&V 20.
    pub reference: Option<FieldReference>,
}

/// Reference data of a field at points.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldReference {
    /// The column compared.
    pub column: String,
    /// Whether the data are a published benchmark solution (else measurements).
    pub benchmark: bool,
    /// The points.
    pub points: Vec<profile::ReferencePoint>,
    /// u_num = U / divisor: the study's `validation_divisor`, else 2 (U read as an expanded
    /// uncertainty at about 95 %, the default rule's reading; GUM k = 2, from memory).
    pub divisor: f64,
    /// Coverage factor k (the study's `coverage_factor`).
    pub coverage: f64,
}

/// How the probe files of a field are read (docs/study-file.md, "Tabular files").
#[derive(Debug, Clone, PartialEq, Default)]
pub struct FieldReading {
    /// Separator and decimal mark; `None` is detected per file.
    pub options: crate::tabular::Options,
    /// Per column of [`FieldSpec::columns`] (same order; may be empty): where it is read from
    /// (`None`: its own name) and the factor applied to its values (`None`: 1, or 0.01 for a
    /// column in `%`).
    pub columns: Vec<(Option<crate::tabular::ColumnRef>, Option<f64>)>,
}

/// Tuning of the streaming (the defaults suit large fields; tests use small values).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FieldOptions {
    /// Rows per parallel chunk (at least 1).
    pub chunk_rows: usize,
    /// Bytes per raw read block (at least 1).
    pub block_bytes: usize,
}

impl Default for FieldOptions {
    fn default() -> Self {
        FieldOptions {
            chunk_rows: DEFAULT_CHUNK_ROWS,
            block_bytes: DEFAULT_BLOCK_BYTES,
        }
    }
}

/// Why a field could not be assessed. Data errors name the file, the 1-based line (the header
/// is line 1) and the column.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum FieldError {
    /// The field description or the mesh sizes are unusable.
    #[error("field `{field}`: {message}")]
    Spec {
        /// Field name.
        field: String,
        /// What is wrong.
        message: String,
    },
    /// A probe file could not be opened or read.
    #[error("cannot read {}: {source}", path.display())]
    Read {
        /// The file.
        path: PathBuf,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
    /// A probe file has no header line.
    #[error("{}: the file is empty, a header line is needed", path.display())]
    Empty {
        /// The file.
        path: PathBuf,
    },
    /// The CSV text itself is broken.
    #[error("{}, line {line}: {message}", path.display())]
    Malformed {
        /// The file.
        path: PathBuf,
        /// Line.
        line: u64,
        /// What is wrong.
        message: String,
    },
    /// A column the field needs is not in the header.
    #[error("{}, line {line}: no column `{column}` in the header{hint}", path.display())]
    MissingColumn {
        /// The file.
        path: PathBuf,
        /// The header's line.
        line: u64,
        /// The column.
        column: String,
        /// `; ` and a hint when the separator looks wrong, else empty.
        hint: String,
    },
    /// A column the field needs appears twice in the header.
    #[error("{}, line {line}: column `{column}` appears more than once in the header", path.display())]
    DuplicateColumn {
        /// The file.
        path: PathBuf,
        /// The header's line.
        line: u64,
        /// The column.
        column: String,
    },
    /// A row has fewer fields than the header.
    #[error(
        "{}, line {line}, column `{column}`: the row has {found} fields but the header has {expected}",
        path.display()
    )]
    ShortRow {
        /// The file.
        path: PathBuf,
        /// Line.
        line: u64,
        /// The first column the row lacks.
        column: String,
        /// Fields in the row.
        found: usize,
        /// Fields in the header.
        expected: usize,
    },
    /// A row has more fields than the header.
    #[error(
        "{}, line {line}: the row has {found} fields but the header has {expected} (extra fields after column `{column}`)",
        path.display()
    )]
    LongRow {
        /// The file.
        path: PathBuf,
        /// Line.
        line: u64,
        /// The header's last column.
        column: String,
        /// Fields in the row.
        found: usize,
        /// Fields in the header.
        expected: usize,
    },
    /// A value is not a number.
    #[error("{}, line {line}, column `{column}`: `{text}` is not a number", path.display())]
    NotANumber {
        /// The file.
        path: PathBuf,
        /// Line.
        line: u64,
        /// The column.
        column: String,
        /// The text found (shortened).
        text: String,
    },
    /// A value is infinite or not a number.
    #[error("{}, line {line}, column `{column}`: `{text}` is not a finite number", path.display())]
    NotFinite {
        /// The file.
        path: PathBuf,
        /// Line.
        line: u64,
        /// The column.
        column: String,
        /// The text found (shortened).
        text: String,
    },
    /// A VTK file could not be read, or lacks what the field needs.
    #[error("{}: {message}", path.display())]
    Mesh {
        /// The file.
        path: PathBuf,
        /// What is wrong (the place in the file first, when known).
        message: String,
    },
    /// A probe id differs from the finest mesh's id in the same row.
    #[error("{0}")]
    IdMismatch(Box<IdMismatch>),
    /// One file has fewer data rows than another.
    #[error(
        "{}, line {line}: the file ends after {rows} data rows, but {} goes on at line {other_line}; every mesh must list the same probes",
        path.display(), other_path.display()
    )]
    RowCount {
        /// The shorter file.
        path: PathBuf,
        /// Its last line (the header line when it has no rows).
        line: u64,
        /// Data rows it has.
        rows: u64,
        /// A longer file.
        other_path: PathBuf,
        /// The first line there without a partner.
        other_line: u64,
    },
    /// The per-point file could not be written.
    #[error("cannot write {}: {source}", path.display())]
    Write {
        /// The target file.
        path: PathBuf,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
}

/// Where two probe files disagree on a probe id (see [`FieldError::IdMismatch`]).
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error(
    "{}, line {line}, column `{column}`: id `{found}` differs from id `{expected}` at line {expected_line} of {}; every mesh must list the same probes in the same order",
    path.display(), expected_path.display()
)]
pub struct IdMismatch {
    /// The file with the differing id.
    pub path: PathBuf,
    /// Its line.
    pub line: u64,
    /// The id column's name in that file.
    pub column: String,
    /// The id found (shortened).
    pub found: String,
    /// The finest mesh's id (shortened).
    pub expected: String,
    /// The finest mesh's file.
    pub expected_path: PathBuf,
    /// The line there.
    pub expected_line: u64,
}

/// Byte buffers handed back for reuse: raw read blocks and formatted chunks (fresh large
/// buffers cost page faults).
type Pool = std::sync::Mutex<Vec<Vec<u8>>>;

fn give_back(pool: &Pool, buf: Vec<u8>, max: usize) {
    if let Ok(mut p) = pool.lock() {
        if p.len() < max {
            p.push(buf);
        }
    }
}

fn pooled(pool: &Pool, capacity: usize) -> Vec<u8> {
    let buf = pool.lock().ok().and_then(|mut p| p.pop());
    match buf {
        Some(mut b) => {
            b.clear();
            b.reserve(capacity);
            b
        }
        None => Vec::with_capacity(capacity),
    }
}

fn check_spec(spec: &FieldSpec, opts: &FieldOptions) -> Result<(), FieldError> {
    let bad = |message: String| FieldError::Spec {
        field: spec.name.clone(),
        message,
    };
    if spec.files.len() != 3 {
        return Err(bad(format!(
            "three probe files are needed (the three finest meshes), got {}",
            spec.files.len()
        )));
    }
    if spec.columns.is_empty() {
        return Err(bad("no columns to estimate".into()));
    }
    for (i, c) in spec.columns.iter().enumerate() {
        if c.is_empty() {
            return Err(bad("a column name is empty".into()));
        }
        if spec.columns[..i].contains(c) {
            return Err(bad(format!("column `{c}` is listed twice")));
        }
    }
    if spec.id.as_deref() == Some("") {
        return Err(bad("the id column name is empty".into()));
    }
    if let Some(w) = &spec.write {
        if spec.columns.iter().any(|c| c == "id") {
            return Err(bad(
                "a column named `id` would clash with the id column of the per-point file".into(),
            ));
        }
        if w.as_os_str().is_empty() || w.as_os_str() == "-" {
            return Err(bad(
                "the per-point results need a file path (standard output is not offered)".into(),
            ));
        }
    }
    if opts.chunk_rows == 0 || opts.block_bytes == 0 {
        return Err(bad("chunk and block sizes must be at least 1".into()));
    }
    Ok(())
}

/// Assesses a field with every mesh it has (`h`: the sizes of `spec.files`, finest first):
/// VTK files on meshes and probe files of four meshes or more in memory (`mesh`), three probe
/// files streamed ([`assess_field`]).
pub(crate) fn assess_any(
    spec: &FieldSpec,
    h: &[f64],
    settings: &ThreeGridSettings,
    sink: Option<Box<dyn PointSink>>,
) -> Result<FieldSummary, FieldError> {
    // The streamed path makes the plain per-point estimate; a global order or a noise floor
    // needs the estimate with every option, which the in-memory path makes.
    let plain = spec.estimate.order == OrderBasis::PerPoint && spec.estimate.noise_floor <= 0.0;
    match h {
        [a, b, c] if plain && !spec.files.iter().any(|f| is_vtk(f)) => {
            assess_field(spec, [*a, *b, *c], settings, sink)
        }
        _ => mesh::assess_in_memory(spec, h, settings, sink),
    }
}

/// Assesses a field with the default streaming options. See [`assess_field_with`].
pub(crate) fn assess_field(
    spec: &FieldSpec,
    h: [f64; 3],
    settings: &ThreeGridSettings,
    sink: Option<Box<dyn PointSink>>,
) -> Result<FieldSummary, FieldError> {
    assess_field_with(spec, h, settings, &FieldOptions::default(), sink)
}

/// Assesses a field: the three-mesh estimate at every probe of the three finest meshes' files
/// (`spec.files`, finest first, with sizes `h`), the per-point file written into `sink` when
/// one is given (in input order; see "Per-point file" in the module notes), and the summary
/// returned. `spec.write` names the file the sink stands for.
pub fn assess_field_with(
    spec: &FieldSpec,
    h: [f64; 3],
    settings: &ThreeGridSettings,
    opts: &FieldOptions,
    sink: Option<Box<dyn PointSink>>,
) -> Result<FieldSummary, FieldError> {
    check_spec(spec, opts)?;
    let fast = FastThreeGrid::new(h, settings).map_err(|e| FieldError::Spec {
        field: spec.name.clone(),
        message: e.to_string(),
    })?;
    let mut readers = Vec::with_capacity(3);
    let mut layouts = Vec::with_capacity(3);
    let raw_pool: Arc<Pool> = Arc::new(std::sync::Mutex::new(Vec::new()));
    for path in &spec.files {
        let mut r = BlockReader::open(path, opts.block_bytes, Arc::clone(&raw_pool))?;
        let header = r.read_header(&spec.reading.options)?;
        let mut layout = Layout::new(path, &header, spec)?;
        if layout.units_row {
            r.skip_units_row();
        }
        // The finest values are written back as given: the same numbers, no formatting cost.
        layout.keep_text = layouts.is_empty() && sink.is_some() && layout.as_given();
        layouts.push(layout);
        readers.push(r);
    }
    let writing = sink.is_some();
    let bin_scale = ORDER_BINS as f64 / fast.order_cap();
    let chunk_rows = opts.chunk_rows;
    // Rounds of eight chunks per thread: small tasks keep both cores busy to a round's end.
    let round_rows = chunk_rows.saturating_mul(8 * rayon::current_num_threads().max(1));

    let pool: Pool = std::sync::Mutex::new(Vec::new());
    let (result, written) = std::thread::scope(|scope| {
        let mut rxs = Vec::with_capacity(3);
        for r in readers {
            let (tx, rx) = sync_channel(READ_AHEAD);
            scope.spawn(move || run_reader(r, tx));
            rxs.push(rx);
        }
        let pool = &pool;
        let (wtx, writer) = match sink {
            Some(sink) => {
                let (tx, rx) = sync_channel::<Vec<u8>>(WRITE_AHEAD);
                (
                    Some(tx),
                    Some(scope.spawn(move || run_writer(sink, rx, pool))),
                )
            }
            None => (None, None),
        };
        let result = drive(
            &rxs,
            wtx.as_ref(),
            pool,
            &raw_pool,
            &layouts,
            &fast,
            &PointChecks::new(settings),
            spec,
            chunk_rows,
            round_rows,
            bin_scale,
        );
        drop(wtx);
        drop(rxs);
        let written = writer.map(|w| {
            w.join().unwrap_or_else(|_| {
                Err(std::io::Error::other(
                    "the writing thread stopped unexpectedly",
                ))
            })
        });
        (result, written)
    });

    let accs = match (result, written) {
        (Ok(accs), None) => accs,
        (Ok(accs), Some(Ok(sink))) => {
            sink.finish().map_err(|source| FieldError::Write {
                path: spec.write.clone().unwrap_or_default(),
                source,
            })?;
            accs
        }
        (_, Some(Err(source))) => {
            return Err(FieldError::Write {
                path: spec.write.clone().unwrap_or_default(),
                source,
            })
        }
        (Err(e), _) => return Err(e),
    };
    let points = accs.first().map_or(0, |a| {
        a.classes.monotonic
            + a.classes.oscillatory
            + a.classes.divergent
            + a.classes.no_change
            + a.classes.none
    });
    Ok(FieldSummary {
        name: spec.name.clone(),
        points,
        written: if writing {
            spec.write.as_ref().map(|p| p.display().to_string())
        } else {
            None
        },
        columns: spec
            .columns
            .iter()
            .zip(&accs)
            .map(|(name, a)| a.finish(name))
            .collect(),
        setup: None,
        line: None,
        comparison: None,
    })
}

/// The calling thread's loop: gather raw blocks, then parse them while the chunks lined up in
/// the previous round are estimated, hand the results over for writing in order, and line up
/// the next chunks.
#[allow(clippy::too_many_arguments)]
fn drive(
    rxs: &[Receiver<Result<RawBlock, FieldError>>],
    wtx: Option<&SyncSender<Vec<u8>>>,
    pool: &Pool,
    raw_pool: &Pool,
    layouts: &[Layout],
    fast: &FastThreeGrid,
    checks: &PointChecks,
    spec: &FieldSpec,
    chunk_rows: usize,
    round_rows: usize,
    bin_scale: f64,
) -> Result<Vec<ColumnAcc>, FieldError> {
    let ncols = spec.columns.len();
    let mut accs = vec![ColumnAcc::default(); ncols];
    // A send fails only when the writer stopped on an error, which the caller reports.
    let gone = || FieldError::Write {
        path: spec.write.clone().unwrap_or_default(),
        source: std::io::Error::other("the writing thread stopped"),
    };
    if let Some(tx) = wtx {
        tx.send(header_bytes(&spec.columns)).map_err(|_| gone())?;
    }
    let mut queues: [Queue; 3] = Default::default();
    for q in queues.iter_mut() {
        q.last_line = 1;
    }
    let mut taken: u64 = 0;
    let mut chunks: Vec<[Vec<Segment>; 3]> = Vec::new();
    let rows_pool: RowsPool = std::sync::Mutex::new(Vec::new());
    let write = wtx.map(|_| pool);
    loop {
        // Gather raw blocks until each file has about a round of rows.
        let mut raw: Vec<(usize, RawBlock)> = Vec::new();
        for (f, q) in queues.iter_mut().enumerate() {
            let mut est = q.pending;
            while est < round_rows && !q.eof {
                match rxs[f].recv() {
                    Ok(Ok(b)) => {
                        est += b.newlines.max(1);
                        raw.push((f, b));
                    }
                    Ok(Err(e)) => return Err(e),
                    Err(_) => q.eof = true,
                }
            }
        }
        let (parsed, computed) = rayon::join(
            || {
                raw.par_iter()
                    .map(|(f, b)| parse_block(&layouts[*f], b, &rows_pool))
                    .collect::<Vec<_>>()
            },
            || {
                chunks
                    .par_iter()
                    .map(|c| compute_chunk(fast, layouts, c, ncols, checks, write))
                    .collect::<Vec<_>>()
            },
        );
        recycle(&rows_pool, &mut chunks);
        // Earlier rows first: the estimates, then the newly parsed blocks.
        for c in computed {
            let c = c?;
            for (acc, part) in accs.iter_mut().zip(&c.accs) {
                acc.merge(part, bin_scale);
            }
            if let Some(tx) = wtx {
                tx.send(c.bytes).map_err(|_| gone())?;
            }
        }
        for ((f, _), rows) in raw.iter().zip(parsed) {
            queues[*f].push(rows?);
        }
        for (_, b) in raw {
            give_back(raw_pool, b.bytes, RAW_POOL_MAX);
        }

        // Line the files up.
        let avail = queues.iter().map(|q| q.pending).min().unwrap_or(0);
        let any_eof = queues.iter().any(|q| q.eof);
        let take = if any_eof {
            avail
        } else {
            avail - avail % chunk_rows
        };
        if take == 0 {
            if !any_eof {
                continue;
            }
            let short = queues.iter().position(|q| q.eof && q.pending == 0);
            let long = queues.iter().position(|q| q.pending > 0);
            match (short, long) {
                (Some(s), Some(l)) => {
                    return Err(FieldError::RowCount {
                        path: layouts[s].path.clone(),
                        line: queues[s].last_line,
                        rows: taken,
                        other_path: layouts[l].path.clone(),
                        other_line: queues[l].next_line().unwrap_or(0),
                    })
                }
                (Some(_), None) if queues.iter().all(|q| q.eof) => break,
                _ => continue,
            }
        }
        let mut left = take;
        while left > 0 {
            let n = left.min(chunk_rows);
            let [a, b, c] = &mut queues;
            chunks.push([a.take(n), b.take(n), c.take(n)]);
            left -= n;
        }
        taken += take as u64;
    }
    Ok(accs)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use std::fmt::Write as _;
    use std::fs::File;
    use std::path::Path;

    /// The Celik et al. (2008) GCI governs (these tests check its formula per point).
    fn celik_settings() -> ThreeGridSettings {
        ThreeGridSettings {
            rule: crate::estimate::rules::Rule::CelikGci,
            ..ThreeGridSettings::default()
        }
    }

    const H: [f64; 3] = [1.0, 1.5, 1.5 * 1.3];

    /// Writes one probe file per mesh; `rows[i]` holds (id, values on the three meshes).
    fn write_meshes(dir: &Path, header: &str, rows: &[(String, [f64; 3])]) -> Vec<PathBuf> {
        (0..3)
            .map(|m| {
                let mut s = format!("{header}\n");
                for (id, v) in rows {
                    let _ = writeln!(s, "{id},{}", v[m]);
                }
                let p = dir.join(format!("L{}.csv", m + 1));
                std::fs::write(&p, s).unwrap();
                p
            })
            .collect()
    }

    #[test]
    fn three_probe_files_keep_the_noise_floor_and_the_global_order() {
        // Manufactured: probe `a` follows φ = 1 + 0.1 h² exactly (order 2, analytic); probe `b`
        // has the same value on every mesh. With a noise floor f, `b` is no_change with U = f
        // (docs/method.md §15); the summary reports the floor and the global order asked for.
        let dir = tempfile::tempdir().unwrap();
        let a = H.map(|x| 1.0 + 0.1 * x * x);
        let rows = vec![("a".to_string(), a), ("b".to_string(), [2.0; 3])];
        let files = write_meshes(dir.path(), "id,cp", &rows);
        let mut s = spec(files, None);
        s.estimate.noise_floor = 1e-3;
        let out = assess_any(&s, &H, &ThreeGridSettings::default(), None).unwrap();
        let floor = out.columns[0]
            .noise_floor
            .as_ref()
            .expect("the floor is reported");
        assert_eq!((floor.within, floor.partly_within), (1, 0));
        s.estimate.noise_floor = 0.0;
        s.estimate.order = OrderBasis::Average;
        let out = assess_any(&s, &H, &ThreeGridSettings::default(), None).unwrap();
        let g = out.columns[0]
            .global_order
            .as_ref()
            .expect("the global order is reported");
        assert_relative_eq!(g.order.unwrap(), 2.0, max_relative = 1e-9);
        // Without options the streamed path answers (no `setup` in its summary).
        s.estimate.order = OrderBasis::PerPoint;
        assert!(assess_any(&s, &H, &ThreeGridSettings::default(), None)
            .unwrap()
            .setup
            .is_none());
    }

    fn spec(files: Vec<PathBuf>, write: Option<PathBuf>) -> FieldSpec {
        FieldSpec {
            name: "blade".into(),
            id: None,
            columns: vec!["cp".into()],
            files,
            write,
            reading: FieldReading::default(),
            probe_points: None,
            estimate: Default::default(),
        }
    }

    /// A test sink: a temporary beside the target, renamed onto it when finished (as the
    /// command line does), so a failed run leaves an older file untouched.
    struct FileSink {
        file: File,
        tmp: PathBuf,
        target: PathBuf,
    }

    impl PointSink for FileSink {
        fn write_all(&mut self, bytes: &[u8]) -> std::io::Result<()> {
            std::io::Write::write_all(&mut self.file, bytes)
        }
        fn finish(self: Box<Self>) -> std::io::Result<()> {
            std::fs::rename(&self.tmp, &self.target)
        }
    }

    impl Drop for FileSink {
        fn drop(&mut self) {
            // Unfinished (the run failed): nothing is left behind. After a rename, nothing is
            // at the temporary path any more.
            let _ = std::fs::remove_file(&self.tmp);
        }
    }

    fn sink_for(spec: &FieldSpec) -> Option<Box<dyn PointSink>> {
        sink_to(spec.write.clone())
    }

    fn sink_to(write: Option<PathBuf>) -> Option<Box<dyn PointSink>> {
        write.map(|target| {
            let tmp = target.with_extension("part");
            if let Some(dir) = target.parent() {
                std::fs::create_dir_all(dir).unwrap();
            }
            Box::new(FileSink {
                file: File::create(&tmp).unwrap(),
                tmp,
                target,
            }) as Box<dyn PointSink>
        })
    }

    fn small() -> FieldOptions {
        FieldOptions {
            chunk_rows: 3,
            block_bytes: 16,
        }
    }

    fn read_rows(path: &Path) -> Vec<Vec<String>> {
        let mut r = csv::ReaderBuilder::new()
            .has_headers(false)
            .from_path(path)
            .unwrap();
        r.records()
            .map(|x| x.unwrap().iter().map(str::to_string).collect())
            .collect()
    }

    /// φ0(x) and α(x) of the manufactured field: smooth analytic functions of the position.
    fn phi0(x: f64) -> f64 {
        1.0 + 0.5 * (3.0 * x).sin()
    }
    fn alpha(x: f64) -> f64 {
        0.2 + 0.1 * (2.0 * x).cos()
    }

    #[test]
    fn manufactured_field_recovers_order_and_limit() {
        // Source: manufactured data φ = φ0(x) + α(x) h^p (analytic); the exact three-point fit
        // returns p and φ0 at every point (Celik et al. 2008 eqs. for p and φ_ext).
        let dir = tempfile::tempdir().unwrap();
        let n = 200;
        let p_of = |x: f64| 1.0 + 1.5 * x; // order varies along the blade, 1 … 2.5
        let rows: Vec<_> = (0..n)
            .map(|i| {
                let x = i as f64 / n as f64;
                (
                    format!("P{i}"),
                    H.map(|h| phi0(x) + alpha(x) * h.powf(p_of(x))),
                )
            })
            .collect();
        let files = write_meshes(dir.path(), "probe,cp", &rows);
        let out = dir.path().join("out/sub/points.csv");
        let s = assess_field_with(
            &spec(files, Some(out.clone())),
            H,
            &celik_settings(),
            &small(),
            sink_to(Some(out.clone())),
        )
        .unwrap();
        assert_eq!(s.points, n as u64);
        assert_eq!(s.columns[0].classes.monotonic, n as u64);
        let table = read_rows(&out);
        assert_eq!(
            table[0],
            [
                "id",
                "cp",
                "cp_extrapolated",
                "cp_order",
                "cp_class",
                "cp_uncertainty"
            ]
        );
        assert_eq!(table.len(), n + 1);
        for (i, row) in table[1..].iter().enumerate() {
            let x = i as f64 / n as f64;
            assert_eq!(row[0], format!("P{i}"));
            let cp: f64 = row[1].parse().unwrap();
            assert_eq!(
                cp.to_bits(),
                rows[i].1[0].to_bits(),
                "round trip of the finest value"
            );
            assert_relative_eq!(row[2].parse::<f64>().unwrap(), phi0(x), max_relative = 1e-9);
            assert_relative_eq!(row[3].parse::<f64>().unwrap(), p_of(x), max_relative = 1e-8);
            assert_eq!(row[4], "monotonic");
            // U = Fs |ε21| / (r21^p − 1) (Celik et al. 2008, GCI in absolute form).
            let r21p = 1.5_f64.powf(p_of(x));
            let e21 = (rows[i].1[1] - rows[i].1[0]).abs();
            assert_relative_eq!(
                row[5].parse::<f64>().unwrap(),
                1.25 * e21 / (r21p - 1.0),
                max_relative = 1e-8
            );
        }
        // Mean and median leave out the points whose convergence is not demonstrated. Here
        // that is R = ε21/ε32 > 0.9 (assess::govern's limit), which for the exact power law
        // on these ratios is R(p) = (1.5^p − 1)/(1.5^p (1.3^p − 1)) (analytic), decreasing in
        // p: the low orders near 1 are left out. The kept orders 1 + 1.5 i/n are evenly
        // spaced, so their mean is the mean of the first and last (arithmetic).
        let c = &s.columns[0];
        let ratio = |p: f64| (1.5_f64.powf(p) - 1.0) / (1.5_f64.powf(p) * (1.3_f64.powf(p) - 1.0));
        let kept: Vec<f64> = (0..n)
            .map(|i| p_of(i as f64 / n as f64))
            .filter(|p| ratio(*p) <= crate::assess::DEMONSTRATED_MAX_RATIO)
            .collect();
        assert!(kept.len() > n / 2 && kept.len() < n, "{}", kept.len());
        assert_eq!(c.order_points, kept.len() as u64);
        assert_eq!(c.not_demonstrated(), (n - kept.len()) as u64);
        let mean = 0.5 * (kept[0] + kept[kept.len() - 1]);
        assert_relative_eq!(c.mean_order.unwrap(), mean, max_relative = 1e-9);
        // The median lies within one histogram bin (20/20000) of the exact median, here the
        // same value as the mean (orders evenly spaced).
        assert!((c.median_order.unwrap() - mean).abs() <= 1e-3);
        assert_eq!(
            s.written.as_deref(),
            Some(out.display().to_string().as_str())
        );
    }

    #[test]
    fn constant_order_gives_exact_median_and_relative_figures() {
        // Source: manufactured data with p = 2 everywhere (analytic): every bin of the order
        // histogram holding values holds the same value, so the median is exact.
        let dir = tempfile::tempdir().unwrap();
        let rows: Vec<_> = (0..50)
            .map(|i| {
                let x = i as f64 / 50.0;
                (format!("{i}"), H.map(|h| phi0(x) + alpha(x) * h * h))
            })
            .collect();
        let files = write_meshes(dir.path(), "id,cp", &rows);
        let s = assess_field(&spec(files, None), H, &celik_settings(), sink_to(None)).unwrap();
        let c = &s.columns[0];
        assert_relative_eq!(c.median_order.unwrap(), 2.0, max_relative = 1e-10);
        assert_relative_eq!(c.mean_order.unwrap(), 2.0, max_relative = 1e-10);
        // Relative U/|φ1| with U = 1.25 α h1² (r21² − 1)/(r21² − 1) = 1.25 α (formula, h1 = 1).
        let rels: Vec<f64> = rows
            .iter()
            .enumerate()
            .map(|(i, r)| 1.25 * alpha(i as f64 / 50.0) / r.1[0].abs())
            .collect();
        let mean = rels.iter().sum::<f64>() / rels.len() as f64;
        let max = rels.iter().fold(0.0_f64, |m, v| m.max(*v));
        assert_relative_eq!(c.mean_relative.unwrap(), mean, max_relative = 1e-9);
        assert_relative_eq!(c.max_relative.unwrap(), max, max_relative = 1e-9);
        assert!(s.written.is_none());
        let json = serde_json::to_value(&s).unwrap();
        assert_eq!(json["written"], serde_json::Value::Null);
        assert_eq!(json["columns"][0]["classes"]["monotonic"], 50);
        assert!(json["columns"][0].get("formal_order_points").is_none());
    }

    #[test]
    fn divergent_points_have_empty_cells() {
        // Stern et al. (2001) classes: R = ε21/ε32 = 0.02/0.01 = 2 is monotonic divergence,
        // R = 0.03/(−0.02) = −1.5 oscillatory divergence; no order, no band.
        let dir = tempfile::tempdir().unwrap();
        let rows = vec![
            ("a".to_string(), [1.0, 1.02, 1.03]),
            ("b".to_string(), [1.0, 1.03, 1.01]),
            ("c".to_string(), [2.5, 2.5, 2.5]),
            ("d".to_string(), [1.0, 0.99, 1.02]),
        ];
        let files = write_meshes(dir.path(), "id,cp", &rows);
        let out = dir.path().join("p.csv");
        let s = assess_field_with(
            &spec(files, Some(out.clone())),
            [1.0, 1.5, 2.25],
            &ThreeGridSettings::default(),
            &small(),
            sink_to(Some(out.clone())),
        )
        .unwrap();
        let t = read_rows(&out);
        assert_eq!(t[1], ["a", "1", "", "", "divergent", ""]);
        assert_eq!(t[2], ["b", "1", "", "", "divergent", ""]);
        // No change: extrapolated = φ1, no order, zero uncertainty (three_grid rules).
        assert_eq!(t[3], ["c", "2.5", "2.5", "", "no_change", "0"]);
        // Oscillatory, R = −1/3, equal ratios: p = ln 3/ln 1.5 (analytic), half range 0.015
        // governs over the GCI 1.25·0.01/2 (as in the three_grid test of the same data).
        assert_eq!(t[4][4], "oscillatory");
        assert_relative_eq!(
            t[4][3].parse::<f64>().unwrap(),
            3.0_f64.ln() / 1.5_f64.ln(),
            max_relative = 1e-12
        );
        assert_relative_eq!(t[4][5].parse::<f64>().unwrap(), 0.015, max_relative = 1e-12);
        let c = &s.columns[0];
        assert_eq!(
            c.classes,
            ClassCounts {
                monotonic: 0,
                oscillatory: 1,
                divergent: 2,
                no_change: 1,
                none: 0
            }
        );
        assert_eq!(c.oscillation_range_points, 1);
        assert_eq!(s.warnings()[0].code, "field_points_divergent");
        // Relative figures leave the divergent points out: (0 + 0.015/1)/2.
        assert_relative_eq!(c.mean_relative.unwrap(), 0.0075, max_relative = 1e-12);
    }

    #[test]
    fn order_is_kept_across_chunks_and_blocks() {
        // Checks the pipeline itself (no external value): tiny chunks and blocks must give the
        // same bytes as one chunk, and the ids in input order.
        let dir = tempfile::tempdir().unwrap();
        let rows: Vec<_> = (0..97)
            .map(|i| {
                let x = i as f64 * 0.37;
                (
                    format!("q{}", 1000 - i),
                    [
                        x.sin(),
                        x.sin() + 0.01 * x.cos(),
                        x.sin() + 0.013 * (1.7 * x).cos(),
                    ],
                )
            })
            .collect();
        let files = write_meshes(dir.path(), "id,cp", &rows);
        let a = dir.path().join("a.csv");
        let b = dir.path().join("b.csv");
        let set = ThreeGridSettings::default();
        assess_field_with(
            &spec(files.clone(), Some(a.clone())),
            H,
            &set,
            &small(),
            sink_to(Some(a.clone())),
        )
        .unwrap();
        let s2 = assess_field_with(
            &spec(files, Some(b.clone())),
            H,
            &set,
            &FieldOptions {
                chunk_rows: 1000,
                block_bytes: 1 << 16,
            },
            sink_to(Some(b.clone())),
        )
        .unwrap();
        let (ta, tb) = (std::fs::read(&a).unwrap(), std::fs::read(&b).unwrap());
        assert_eq!(ta, tb);
        let ids: Vec<String> = read_rows(&a)[1..].iter().map(|r| r[0].clone()).collect();
        let want: Vec<String> = rows.iter().map(|r| r.0.clone()).collect();
        assert_eq!(ids, want);
        assert_eq!(s2.points, 97);
    }

    #[test]
    fn quoted_ids_crlf_and_blank_lines() {
        // CSV quoting and line ends as RFC 4180 describes them; errors count physical lines.
        let dir = tempfile::tempdir().unwrap();
        let body = "\u{feff}probe,cp\r\n\"a,1\",1.0\r\n\r\n\"b\nc\",2.0\r\nd,3.0\r\n";
        let files: Vec<PathBuf> = (0..3)
            .map(|m| {
                let p = dir.path().join(format!("m{m}.csv"));
                let scaled = body
                    .replace("1.0", &format!("{}", 1.0 + 0.01 * m as f64))
                    .replace("2.0", &format!("{}", 2.0 + 0.01 * m as f64))
                    .replace("3.0", if m == 2 { "x3" } else { "3.0" });
                std::fs::write(&p, scaled).unwrap();
                p
            })
            .collect();
        let e = assess_field_with(
            &spec(files.clone(), None),
            H,
            &ThreeGridSettings::default(),
            &small(),
            sink_to(None),
        )
        .unwrap_err();
        assert_eq!(
            e.to_string(),
            format!(
                "{}, line 6, column `cp`: `x3` is not a number",
                files[2].display()
            )
        );
        std::fs::write(&files[2], body.replace("3.0", "3.1")).unwrap();
        let out = dir.path().join("o.csv");
        let s = assess_field_with(
            &spec(files, Some(out.clone())),
            H,
            &ThreeGridSettings::default(),
            &small(),
            sink_to(Some(out.clone())),
        )
        .unwrap();
        assert_eq!(s.points, 3);
        let t = read_rows(&out);
        assert_eq!(t[1][0], "a,1");
        assert_eq!(t[2][0], "b\nc");
        assert_eq!(t[3][0], "d");
    }

    fn three_files(dir: &Path, bodies: [&str; 3]) -> Vec<PathBuf> {
        bodies
            .iter()
            .enumerate()
            .map(|(m, b)| {
                let p = dir.join(format!("L{}.csv", m + 1));
                std::fs::write(&p, b).unwrap();
                p
            })
            .collect()
    }

    fn err(bodies: [&str; 3]) -> (String, Vec<PathBuf>) {
        let dir = tempfile::tempdir().unwrap();
        let files = three_files(dir.path(), bodies);
        let out = dir.path().join("out").join("p.csv");
        let e = assess_field_with(
            &spec(files.clone(), Some(out.clone())),
            H,
            &ThreeGridSettings::default(),
            &small(),
            sink_to(Some(out.clone())),
        )
        .unwrap_err();
        // The written file is complete or absent: here absent, and no temporary file is left.
        assert!(!out.exists());
        if let Ok(d) = std::fs::read_dir(dir.path().join("out")) {
            assert_eq!(d.count(), 0, "a temporary file was left behind");
        }
        (e.to_string(), files)
    }

    #[test]
    fn mismatched_id_names_file_and_line() {
        let ok = "id,cp\n1,1.0\n2,2.0\n3,3.0\n4,4.0\n";
        let (e, f) = err([ok, ok, "id,cp\n1,1.1\n2,2.1\n3,3.1\n5,4.1\n"]);
        assert_eq!(
            e,
            format!(
                "{}, line 5, column `id`: id `5` differs from id `4` at line 5 of {}; every mesh must list the same probes in the same order",
                f[2].display(),
                f[0].display()
            )
        );
    }

    #[test]
    fn row_count_mismatch_names_file_and_line() {
        let long = "id,cp\n1,1.0\n2,2.0\n3,3.0\n4,4.0\n5,5.0\n";
        let (e, f) = err([long, "id,cp\n1,1.0\n2,2.0\n3,3.0\n4,4.0\n", long]);
        assert_eq!(
            e,
            format!(
                "{}, line 5: the file ends after 4 data rows, but {} goes on at line 6; every mesh must list the same probes",
                f[1].display(),
                f[0].display()
            )
        );
        // A longer middle file is found as well.
        let short = "id,cp\n1,1.0\n";
        let (e, f) = err([short, "id,cp\n1,1.0\n2,2.0\n", short]);
        assert!(
            e.starts_with(&format!(
                "{}, line 2: the file ends after 1 data rows",
                f[0].display()
            )),
            "{e}"
        );
        assert!(
            e.contains(&format!("{} goes on at line 3", f[1].display())),
            "{e}"
        );
    }

    #[test]
    fn missing_column_and_bad_values_name_file_line_column() {
        let ok = "id,cp\n1,1.0\n2,2.0\n";
        let (e, f) = err([ok, "id,pressure\n1,1.0\n2,2.0\n", ok]);
        assert_eq!(
            e,
            format!("{}, line 1: no column `cp` in the header", f[1].display())
        );
        let (e, f) = err([ok, ok, "id,cp\n1,1.0\n2,abc\n"]);
        assert_eq!(
            e,
            format!(
                "{}, line 3, column `cp`: `abc` is not a number",
                f[2].display()
            )
        );
        let (e, f) = err(["id,cp\n1,inf\n2,2.0\n", ok, ok]);
        assert_eq!(
            e,
            format!(
                "{}, line 2, column `cp`: `inf` is not a finite number",
                f[0].display()
            )
        );
        let (e, f) = err([ok, "id,cp\n1,1.0\n2\n", ok]);
        assert_eq!(
            e,
            format!(
                "{}, line 3, column `cp`: the row has 1 fields but the header has 2",
                f[1].display()
            )
        );
        let (e, f) = err([ok, ok, ""]);
        assert_eq!(
            e,
            format!(
                "{}: the file is empty, a header line is needed",
                f[2].display()
            )
        );
        // An empty value is marked missing (docs/study-file.md): that probe gets class `none`
        // and a warning naming it, and the others are still estimated.
        let dir = tempfile::tempdir().unwrap();
        let files = three_files(dir.path(), [ok, "id,cp\n1,\n2,2.0\n", ok]);
        let s = assess_field_with(
            &spec(files, None),
            H,
            &ThreeGridSettings::default(),
            &small(),
            None,
        )
        .unwrap();
        assert_eq!(s.points, 2);
        assert_eq!(s.columns[0].classes.none, 1);
        assert_eq!(s.columns[0].classes.no_change, 1);
        let w = s.warnings();
        assert_eq!(w[0].code, "field_points_missing");
        assert!(
            w[0].message.contains("1 of 2 probes") && w[0].message.contains("(1)"),
            "{}",
            w[0].message
        );
    }

    #[test]
    fn named_id_column_and_spec_errors() {
        let dir = tempfile::tempdir().unwrap();
        let b = "x,probe,cp\n0.1,a,1.0\n0.2,b,2.0\n";
        let files = three_files(dir.path(), [b, b, b]);
        let mut sp = spec(files, None);
        sp.id = Some("probe".into());
        let s = assess_field(&sp, H, &ThreeGridSettings::default(), sink_for(&sp)).unwrap();
        assert_eq!(s.columns[0].classes.no_change, 2);
        sp.columns = vec!["probe".into()];
        let e = assess_field(&sp, H, &ThreeGridSettings::default(), sink_for(&sp)).unwrap_err();
        assert!(e.to_string().contains("is the id column"), "{e}");
        sp.columns = vec!["cp".into(), "cp".into()];
        let e = assess_field(&sp, H, &ThreeGridSettings::default(), sink_for(&sp)).unwrap_err();
        assert_eq!(e.to_string(), "field `blade`: column `cp` is listed twice");
        sp.columns = vec!["id".into()];
        sp.write = Some(PathBuf::from("points.csv"));
        let e = assess_field(&sp, H, &ThreeGridSettings::default(), sink_for(&sp)).unwrap_err();
        assert_eq!(
            e.to_string(),
            "field `blade`: a column named `id` would clash with the id column of the per-point file"
        );
        sp.write = None;
        sp.columns = vec!["cp".into()];
        let e = assess_field(
            &sp,
            [1.0, 1.0, 2.0],
            &ThreeGridSettings::default(),
            sink_for(&sp),
        )
        .unwrap_err();
        assert_eq!(
            e.to_string(),
            "field `blade`: sizes must be > 0 and increase from the finest to the coarsest mesh"
        );
        sp.files.pop();
        let e = assess_field(&sp, H, &ThreeGridSettings::default(), sink_for(&sp)).unwrap_err();
        assert!(
            e.to_string().contains("three probe files are needed"),
            "{e}"
        );
    }

    #[test]
    fn written_file_replaces_the_old_one_whole() {
        // An earlier complete file stays untouched when a later run fails, and is replaced
        // whole when a run succeeds.
        let dir = tempfile::tempdir().unwrap();
        let ok = "id,cp\n1,1.0\n2,2.0\n";
        let files = three_files(dir.path(), [ok, ok, ok]);
        let out = dir.path().join("p.csv");
        std::fs::write(&out, "old\n").unwrap();
        std::fs::write(&files[2], "id,cp\n1,1.0\n2,inf\n").unwrap();
        let set = ThreeGridSettings::default();
        assert!(assess_field_with(
            &spec(files.clone(), Some(out.clone())),
            H,
            &set,
            &small(),
            sink_to(Some(out.clone()))
        )
        .is_err());
        assert_eq!(std::fs::read_to_string(&out).unwrap(), "old\n");
        std::fs::write(&files[2], ok).unwrap();
        assess_field_with(
            &spec(files, Some(out.clone())),
            H,
            &set,
            &small(),
            sink_to(Some(out.clone())),
        )
        .unwrap();
        let t = read_rows(&out);
        assert_eq!(t.len(), 3);
        // The finest value is written as its file gives it; computed figures in shortest form.
        assert_eq!(t[2], ["2", "2.0", "2", "", "no_change", "0"]);
        let leftovers = std::fs::read_dir(dir.path())
            .unwrap()
            .filter(|e| {
                e.as_ref()
                    .map(|e| e.file_name().to_string_lossy().ends_with(".part"))
                    .unwrap_or(false)
            })
            .count();
        assert_eq!(leftovers, 0);
    }

    #[test]
    fn header_only_files_give_an_empty_result() {
        let dir = tempfile::tempdir().unwrap();
        let files = three_files(dir.path(), ["id,cp\n", "id,cp", "id,cp\n"]);
        let out = dir.path().join("p.csv");
        let s = assess_field(
            &spec(files, Some(out.clone())),
            H,
            &ThreeGridSettings::default(),
            sink_to(Some(out.clone())),
        )
        .unwrap();
        assert_eq!(s.points, 0);
        assert_eq!(s.columns[0].mean_order, None);
        assert_eq!(s.columns[0].median_order, None);
        assert_eq!(
            std::fs::read_to_string(&out).unwrap(),
            "id,cp,cp_extrapolated,cp_order,cp_class,cp_uncertainty\n"
        );
    }
}
