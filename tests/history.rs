//! Monitor histories through the library: synthetic histories of known mean (coverage of the
//! stated statistical uncertainty, the detected start of the steady part), files in the
//! solver's and spreadsheets' layouts, and bad files.

use meshbound::history::{
    analyse_values, read_history, reduce_file, ColumnRef, Decimal, HistorySettings, ReadOptions,
    Separator, Status,
};
use std::path::{Path, PathBuf};

/// splitmix64 (Steele, Lea & Flood 2014): a small, fixed generator for manufactured data.
struct Rng(u64);

impl Rng {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    /// Standard normal by Box–Muller.
    fn normal(&mut self) -> f64 {
        let (u, v) = (self.uniform(), self.uniform());
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
}

/// The parameters of a synthetic history.
#[derive(Clone, Copy)]
struct Case {
    mean: f64,
    jump: f64,
    tau: f64,
    phi: f64,
    sigma: f64,
}

/// A start-up decaying as exp(−t/τ) from `mean + jump` to `mean`, plus stationary AR(1) noise
/// e_t = φ e_{t−1} + σ √(1 − φ²) η_t of variance σ².
fn synthetic(rng: &mut Rng, n: usize, c: &Case) -> Vec<f64> {
    let Case {
        mean,
        jump,
        tau,
        phi,
        sigma,
    } = *c;
    let mut e = sigma * rng.normal();
    let k = sigma * (1.0 - phi * phi).sqrt();
    (0..n)
        .map(|t| {
            if t > 0 {
                e = phi * e + k * rng.normal();
            }
            mean + jump * (-(t as f64) / tau).exp() + e
        })
        .collect()
}

/// The standard deviation of the mean of m consecutive samples of a stationary AR(1) process
/// of variance σ² and coefficient φ (analytic: Var = σ²/m [1 + 2 Σ_{k=1}^{m−1} (1 − k/m) φ^k]
/// = σ²/m [(1 + φ)/(1 − φ) − 2φ(1 − φ^m)/(m(1 − φ)²)]).
fn ar1_mean_sd(m: usize, phi: f64, sigma: f64) -> f64 {
    let mf = m as f64;
    let f = (1.0 + phi) / (1.0 - phi)
        - 2.0 * phi * (1.0 - phi.powi(m as i32)) / (mf * (1.0 - phi).powi(2));
    (sigma * sigma / mf * f).sqrt()
}

fn data(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/histories")
        .join(rel)
}

fn by_name(name: &str) -> ReadOptions {
    ReadOptions::column(ColumnRef::Name(name.into()))
}

/// The binomial range of the count of 200 realisations covering at a true 95 %: the 0.5 % and
/// 99.5 % quantiles, scipy.stats.binom.ppf(0.005, 200, 0.95) = 181 and
/// binom.isf(0.005, 200, 0.95) = 197 (reference library, scipy 1.17.1).
const COVER_RANGE: std::ops::RangeInclusive<usize> = 181..=197;

/// A start-up of 10 noise standard deviations decaying over τ = 100 samples, AR(1) noise with
/// φ = 0.9 (integrated autocorrelation time 9.5 samples), 10 000 samples.
const CASE: Case = Case {
    mean: 1.0,
    jump: 0.5,
    tau: 100.0,
    phi: 0.9,
    sigma: 0.05,
};

#[test]
fn stated_uncertainty_covers_the_known_mean_in_the_nominal_share() {
    // Manufactured data of known mean (CASE); the share is checked against the binomial range
    // (COVER_RANGE). The same check on the interval that treats the samples as independent
    // (1.96 s/√m) must fail: the test tells a method that ignores the autocorrelation.
    let mut rng = Rng(2026);
    let (mut covered, mut naive) = (0usize, 0usize);
    let mut ratio = Vec::new();
    for _ in 0..200 {
        let v = synthetic(&mut rng, 10_000, &CASE);
        let r = analyse_values(&v, None, &HistorySettings::default()).unwrap();
        assert_eq!(r.status, Status::Steady, "{:?}", r.warnings);
        let s = r.statistical.as_ref().unwrap();
        assert_eq!(s.degrees_of_freedom, 19);
        if (r.mean - CASE.mean).abs() <= s.expanded {
            covered += 1;
        }
        let m = r.steady.samples as f64;
        let sd = (v[r.steady.start_index..]
            .iter()
            .map(|x| (x - r.mean).powi(2))
            .sum::<f64>()
            / (m - 1.0))
            .sqrt();
        if (r.mean - CASE.mean).abs() <= 1.96 * sd / m.sqrt() {
            naive += 1;
        }
        // Analytic standard deviation of the mean of an AR(1) process.
        ratio.push(s.standard / ar1_mean_sd(r.steady.samples, CASE.phi, CASE.sigma));
    }
    assert!(COVER_RANGE.contains(&covered), "covered {covered} of 200");
    assert!(
        naive < *COVER_RANGE.start(),
        "independent-sample interval covered {naive}"
    );
    ratio.sort_by(f64::total_cmp);
    // The batch-means standard uncertainty scatters with 19 degrees of freedom (about ±16 % at
    // one standard deviation); its median lies within 10 % of the analytic value.
    let median = ratio[100];
    assert!((0.9..=1.1).contains(&median), "median ratio {median}");
}

#[test]
fn the_cross_check_agrees_with_the_analytic_autocorrelation_time() {
    // Analytic: τ_int of AR(1) = (1 + φ)/(2 (1 − φ)) = 9.5 samples for φ = 0.9.
    let mut rng = Rng(7);
    let steady = Case { jump: 0.0, ..CASE };
    let mut taus = Vec::new();
    for _ in 0..50 {
        let v = synthetic(&mut rng, 20_000, &steady);
        let r = analyse_values(&v, None, &HistorySettings::default()).unwrap();
        let c = r.statistical.unwrap().cross_check.unwrap();
        taus.push(c.integrated_time);
    }
    taus.sort_by(f64::total_cmp);
    let median = taus[25];
    assert!((median - 9.5).abs() < 0.1 * 9.5, "median τ_int {median}");
}

#[test]
fn the_steady_part_starts_after_the_start_up() {
    // Manufactured: a start-up of 40 noise standard deviations (jump 2, σ = 0.05) over τ = 100.
    // MSER weighs the start-up against the scatter of 5-sample batch means, so it cuts where
    // what remains of the start-up is within the noise: at most 4σ there in every realisation,
    // which is after 2.3 τ; and after 3 τ in the median (3 time constants, less a tolerance for
    // the scatter of the cut).
    let case = Case { jump: 2.0, ..CASE };
    let mut rng = Rng(11);
    let mut starts = Vec::new();
    for _ in 0..200 {
        let v = synthetic(&mut rng, 10_000, &case);
        let r = analyse_values(&v, None, &HistorySettings::default()).unwrap();
        let t0 = r.steady.start_index as f64;
        let remaining = case.jump * (-t0 / case.tau).exp();
        assert!(
            remaining <= 4.0 * case.sigma,
            "start {t0}: {remaining} left"
        );
        starts.push(t0 / case.tau);
    }
    starts.sort_by(f64::total_cmp);
    assert!(starts[100] >= 3.0, "median start {} τ", starts[100]);
}

#[test]
fn solver_force_coefficients() {
    // Expected: the numbers written in the sample file (its own text).
    let p = data("solver-v1912/forceCoeffs/0/coefficient.dat");
    let mut o = by_name("Cd");
    o.abscissa = Some(ColumnRef::Name("Time".into()));
    let s = read_history(&p, &o).unwrap();
    assert_eq!(s.separator, Separator::Spaces);
    assert_eq!(s.columns, ["Time", "Cm", "Cd", "Cl", "Cl(f)", "Cl(r)"]);
    assert_eq!(s.values.len(), 12);
    assert_eq!(s.values[0], 1.0625);
    assert_eq!(s.values[11], 0.833333);
    assert_eq!(s.abscissa.as_ref().unwrap()[11], 12.0);
    let s = read_history(&p, &by_name("Cl(f)")).unwrap();
    assert_eq!(s.values[1], -0.009);
    // By position: column 3 is Cd.
    let s = read_history(&p, &ReadOptions::column(ColumnRef::Position(3))).unwrap();
    assert_eq!(s.column, "Cd");
    assert_eq!(s.values[0], 1.0625);
}

#[test]
fn solver_force_vectors() {
    // Expected: the sample file's own text.
    let p = data("solver-v1912/forces/0/force.dat");
    let s = read_history(&p, &by_name("total_x")).unwrap();
    assert_eq!(s.values, [11.5, 11.0, 10.8333, 10.75, 10.7, 10.6667]);
    let s = read_history(&p, &by_name("viscous_y")).unwrap();
    assert_eq!(s.values, [0.25; 6]);
    assert_eq!(s.columns.len(), 10);
    // The older layout: groups of vectors, our component names.
    let p = data("solver-older/forces/0/forces.dat");
    let mut o = by_name("moment_pressure_z");
    o.abscissa = Some(ColumnRef::Name("Time".into()));
    let s = read_history(&p, &o).unwrap();
    assert_eq!(s.values, [1.6, 1.55, 1.53333, 1.525, 1.52, 1.51667]);
    assert_eq!(s.abscissa.unwrap(), [0.5, 1.0, 1.5, 2.0, 2.5, 3.0]);
    assert_eq!(s.columns.len(), 19);
    assert_eq!(s.columns[1], "forces_pressure_x");
    let s = read_history(&p, &by_name("forces_viscous_x")).unwrap();
    assert_eq!(s.values, [0.5; 6]);
}

#[test]
fn solver_probes() {
    // Expected: the sample files' own text; the third probe lies outside the mesh and holds
    // the solver's unset value −1e300 (missing).
    let p = data("solver-v1912/probes/0/p");
    let mut o = by_name("probe_1");
    o.abscissa = Some(ColumnRef::Name("Time".into()));
    let s = read_history(&p, &o).unwrap();
    assert_eq!(s.columns, ["Time", "probe_0", "probe_1", "probe_2"]);
    assert_eq!(s.values, [1498.5, 1497.25, 1499.0]);
    assert_eq!(s.abscissa.unwrap(), [0.001, 0.002, 0.003]);
    let e = read_history(&p, &by_name("probe_2")).unwrap_err();
    assert!(e.to_string().contains("no row holds a finite value"), "{e}");
    let s = read_history(&data("solver-v1912/probes/0/U"), &by_name("probe_1_y")).unwrap();
    assert_eq!(s.values, [0.125, 0.25]);
}

#[test]
fn spreadsheet_exports() {
    // Expected: the sample files' own text.
    let p = data("spreadsheet/pump-efficiency.csv");
    let mut o = by_name("Efficiency [%]");
    o.abscissa = Some(ColumnRef::Name("Iteration".into()));
    let s = read_history(&p, &o).unwrap();
    assert_eq!(s.separator, Separator::Semicolon);
    assert!(s.decimal_comma);
    assert_eq!(s.unit.as_deref(), Some("[%]"));
    assert_eq!(s.values, [78.25, 78.5, 78.75, 79.0]);
    assert_eq!(
        s.abscissa.as_deref(),
        Some(&[100.0, 200.0, 300.0, 500.0][..])
    );
    assert_eq!(s.skipped_lines, [6]);
    assert_eq!(s.warnings[0].code, "samples_skipped");
    let s = read_history(&p, &by_name("Head [m]")).unwrap();
    assert_eq!(s.values, [24.81, 24.79, 24.8, 24.8]);
    assert_eq!(s.skipped_lines, [5]);
    // Set explicitly instead of detected: the same numbers.
    let mut o = by_name("Head [m]");
    o.separator = Separator::Semicolon;
    o.decimal = Decimal::Comma;
    assert_eq!(
        read_history(&p, &o).unwrap().values,
        [24.81, 24.79, 24.8, 24.8]
    );

    let s = read_history(&data("spreadsheet/monitor.tsv"), &by_name("Power [kW]")).unwrap();
    assert_eq!(s.separator, Separator::Tab);
    assert_eq!(s.values, [48.75, 48.5, 48.875]);

    let s = read_history(&data("spreadsheet/quoted.csv"), &by_name("Torque, shaft")).unwrap();
    assert_eq!(s.separator, Separator::Comma);
    assert_eq!(s.values, [310.5, 311.25, 311.0]);
}

fn refused(rel: &str, column: &str) -> meshbound::history::HistoryError {
    let p = data(rel);
    let e = read_history(&p, &by_name(column)).unwrap_err();
    assert_eq!(e.path(), Some(p.as_path()), "{e}");
    assert!(e.to_string().contains(&*p.to_string_lossy()), "{e}");
    e
}

#[test]
fn bad_files_are_refused_with_line_and_column() {
    let e = refused("bad/text-in-value.dat", "Cd");
    assert_eq!((e.line(), e.column()), (Some(3), Some(3)), "{e}");
    assert!(e.to_string().contains("0.5x"), "{e}");
    let e = refused("bad/short-row.dat", "Cd");
    assert_eq!(e.line(), Some(3), "{e}");
    let e = refused("bad/open-quote.csv", "a");
    assert_eq!((e.line(), e.column()), (Some(1), Some(3)), "{e}");
    // Integers in the first row, a decimal comma later: a hint.
    let d = tempfile::tempdir().unwrap();
    let p = d.path().join("later-comma.csv");
    std::fs::write(&p, "it;v\n1;2\n2;2,5\n").unwrap();
    let e = read_history(&p, &by_name("v")).unwrap_err();
    assert_eq!((e.line(), e.column()), (Some(3), Some(3)), "{e}");
    assert!(e.to_string().contains("decimal comma"), "{e}");
    let e = refused("bad/no-data.dat", "Cd");
    assert!(e.to_string().contains("no row of numbers"), "{e}");
    let e = refused("solver-v1912/forceCoeffs/0/coefficient.dat", "CD");
    assert!(e.to_string().contains("`Cl(f)`"), "lists the columns: {e}");
    // A parenthesis that does not close in a data row.
    let e = refused("bad/unbalanced.dat", "Cl");
    assert_eq!((e.line(), e.column()), (Some(3), Some(7)), "{e}");
    assert!(e.to_string().contains("parenthesis"), "{e}");
    let e = read_history(&data("bad/nope.dat"), &by_name("x")).unwrap_err();
    assert!(e.to_string().contains("nope.dat"), "{e}");
    let e = read_history(&data("bad"), &by_name("x")).unwrap_err();
    assert!(e.to_string().contains("folder"), "{e}");
}

#[test]
fn a_file_reduces_to_its_value() {
    // Manufactured: a history file of known mean (CASE, one realisation), written and read
    // back: the file path gives the same result as the samples.
    let d = tempfile::tempdir().unwrap();
    let p = d.path().join("coefficient.dat");
    let v = synthetic(&mut Rng(3), 3000, &CASE);
    let mut text = String::from("# Force coefficients\n#\n# Time\tCm\tCd\n");
    for (i, x) in v.iter().enumerate() {
        text.push_str(&format!("{}\t0.01\t{x:?}\n", i + 1));
    }
    std::fs::write(&p, text).unwrap();
    let mut o = by_name("Cd");
    o.abscissa = Some(ColumnRef::Name("Time".into()));
    let r = reduce_file(&p, &o, &HistorySettings::default()).unwrap();
    let direct = analyse_values(&v, None, &HistorySettings::default()).unwrap();
    assert_eq!(r.value, direct.value);
    assert_eq!(r.steady.start_index, direct.steady.start_index);
    assert_eq!(
        r.steady.start_at,
        Some(direct.steady.start_index as f64 + 1.0)
    );
    assert_eq!(r.column, "Cd");
    let json = serde_json::to_value(&r).unwrap();
    for key in [
        "value",
        "reduction",
        "status",
        "steady",
        "statistical",
        "iterative",
        "warnings",
    ] {
        assert!(json.get(key).is_some(), "{key}");
    }
    assert_eq!(json["statistical"]["method"], "batch_means");
    assert_eq!(json["steady"]["method"], "mser5");
}

mod fuzz_like {
    use super::*;
    use proptest::prelude::*;

    fn options() -> impl Strategy<Value = ReadOptions> {
        (
            prop_oneof![
                (1usize..5).prop_map(ColumnRef::Position),
                Just(ColumnRef::Name("v".into()))
            ],
            prop::option::of((1usize..3).prop_map(ColumnRef::Position)),
            prop_oneof![
                Just(Separator::Auto),
                Just(Separator::Spaces),
                Just(Separator::Comma),
                Just(Separator::Semicolon),
                Just(Separator::Tab)
            ],
            prop_oneof![
                Just(Decimal::Auto),
                Just(Decimal::Point),
                Just(Decimal::Comma)
            ],
        )
            .prop_map(|(column, abscissa, separator, decimal)| ReadOptions {
                column,
                abscissa,
                separator,
                decimal,
            })
    }

    fn texty() -> impl Strategy<Value = Vec<u8>> {
        // Bytes drawn mostly from the characters history files are made of.
        let alphabet: Vec<u8> = b"0123456789.,;\t ()#\n\r\"-+eEvnaN/".to_vec();
        prop::collection::vec(
            prop_oneof![
                8 => prop::sample::select(alphabet),
                1 => any::<u8>()
            ],
            0..400,
        )
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(2000))]

        /// Any bytes: a series of finite samples, or an error naming the file; never a panic.
        #[test]
        fn any_bytes_read_or_refuse(bytes in prop_oneof![texty(), prop::collection::vec(any::<u8>(), 0..400)], o in options()) {
            let p = Path::new("fuzz.dat");
            match meshbound::history::read::read_history_from(&bytes[..], p, &o) {
                Ok(s) => {
                    prop_assert!(!s.values.is_empty());
                    prop_assert!(s.values.iter().all(|v| v.is_finite()));
                    if let Some(x) = &s.abscissa {
                        prop_assert_eq!(x.len(), s.values.len());
                    }
                    let r = meshbound::history::analyse(&s, &HistorySettings::default()).unwrap();
                    prop_assert!(r.value.is_finite());
                }
                Err(e) => prop_assert!(e.to_string().starts_with("fuzz.dat"), "{}", e),
            }
        }

        /// Any finite samples: a finite result whose figures keep their meaning.
        #[test]
        fn any_samples_reduce(v in prop::collection::vec(-1e6f64..1e6, 1..700)) {
            let r = analyse_values(&v, None, &HistorySettings::default()).unwrap();
            prop_assert!(r.value.is_finite() && r.mean.is_finite());
            prop_assert!(r.steady.start_index <= v.len() / 2);
            prop_assert_eq!(r.steady.start_index + r.steady.samples, v.len());
            if let Some(s) = &r.statistical {
                prop_assert!(s.standard >= 0.0 && s.expanded >= s.standard);
            }
            if let Some(i) = &r.iterative {
                prop_assert!(i.value >= i.half_range && i.value >= i.drift);
            }
        }
    }
}
