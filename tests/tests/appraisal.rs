//! Model appraisal: the depth-of-investigation index (Oldenburg & Li 1999)
//! and the "is this feature required?" rerun. Each test states its setup.

use fieldstone_core::constraint::build::{build, ConstraintArrays, Defaults, Layer};
use fieldstone_core::constraint::region::Inputs;
use fieldstone_core::invert::appraise::{depth_of_investigation, doi_profile, feature_test, Hold};
use fieldstone_core::invert::solver::{invert, Problem, RunResult};
use fieldstone_core::invert::{InversionSettings, Weighting};
use fieldstone_core::mesh::recipe::MeshRecipe;
use fieldstone_core::mesh::topo::active_cells;
use fieldstone_core::mesh::TensorMesh;
use fieldstone_core::operator::Operator;
use fieldstone_core::progress::Silent;
use fieldstone_tests::block::{bounded, BlockCase, Noise, SIGMA};

fn constraints(mesh: &TensorMesh, layers: &[Layer]) -> ConstraintArrays {
    let act = active_cells(mesh, None, false, false).unwrap();
    build(mesh, &act, layers, Defaults::density(), &Inputs::default())
        .unwrap()
        .0
}

/// A toy operator: datum i sees only cell i with sensitivity g[i]; cells
/// beyond the data have no sensitivity at all.
struct Diagonal {
    g: Vec<f64>,
    n: usize,
}

impl Operator for Diagonal {
    fn n_data(&self) -> usize {
        self.g.len()
    }
    fn n_cells(&self) -> usize {
        self.n
    }
    fn apply(&self, m: &[f64], out: &mut [f64]) {
        for (i, o) in out.iter_mut().enumerate() {
            *o = self.g[i] * m[i];
        }
    }
    fn apply_t(&self, r: &[f64], out: &mut [f64]) {
        out.iter_mut().for_each(|o| *o = 0.0);
        for (i, v) in r.iter().enumerate() {
            out[i] = self.g[i] * v;
        }
    }
    fn column_norms_sq(&self) -> Vec<f64> {
        let mut v = vec![0.0; self.n];
        for (i, g) in self.g.iter().enumerate() {
            v[i] = g * g;
        }
        v
    }
    fn kind(&self) -> &'static str {
        "dense"
    }
}

/// Closed form (smallness only, no depth weighting): each cell minimises
/// w (g m − d)² + β α_s (m − r)², so m = (w g d + β α_s r)/(w g² + β α_s), and
/// a cell the data cannot see keeps its reference: R = 1 exactly there
/// (Oldenburg & Li 1999: the index is 1 where the model is the reference's).
#[test]
fn the_index_matches_the_closed_form_of_a_diagonal_problem() {
    let mesh = MeshRecipe::uniform(10.0, 10.0, [0.0, 80.0], [0.0, 40.0], 0.0, 20.0)
        .build()
        .unwrap();
    let n = mesh.n_cells(); // 8 × 4 × 2 = 64
    let active: Vec<usize> = (0..n).collect();
    let nd = 40;
    let g: Vec<f64> = (0..nd).map(|i| 0.05 + 0.02 * i as f64).collect();
    let op = Diagonal { g: g.clone(), n };
    let data: Vec<f64> = (0..nd)
        .map(|i| g[i] * (0.2 * ((i as f64) * 0.7).sin()) + SIGMA * ((i * 7 % 5) as f64 - 2.0))
        .collect();
    let unc = vec![SIGMA; nd];
    let k = constraints(&mesh, &[]);
    let pb = Problem {
        mesh: &mesh,
        constraints: &k,
        active: &active,
        data: &data,
        uncertainty: &unc,
        reference_elevation_m: 1.0,
    };
    let s = InversionSettings {
        alpha_s: 1.0,
        alpha_x: 0.0,
        alpha_y: 0.0,
        alpha_z: 0.0,
        weighting: Weighting::None,
        target_tolerance: 0.02,
        ..Default::default()
    };
    let base = invert(&op, &pb, &s, &Silent).unwrap();
    let shift = 0.1;
    let doi = depth_of_investigation(&op, &pb, &s, &base, shift, &Silent).unwrap();
    let w = 1.0 / (SIGMA * SIGMA);
    // The second run's data are raised by the mean field of the shift.
    let level = (0..nd).map(|i| g[i] * shift).sum::<f64>() / nd as f64;
    assert!((doi.data_level_shift - level).abs() < 1e-12);
    let closed = |beta: f64, r: f64, j: usize| {
        if j < nd {
            let dj = if r == 0.0 { data[j] } else { data[j] + level };
            (w * g[j] * dj + beta * r) / (w * g[j] * g[j] + beta)
        } else {
            r
        }
    };
    // φ_m is α_s Σ (m − r)² with α_s = 1; the solver's φ = φ_d + β φ_m.
    let (b1, b2) = (base.summary.beta, doi.shifted.summary.beta);
    for j in 0..n {
        let expect = (closed(b2, shift, j) - closed(b1, 0.0, j)) / shift;
        assert!(
            (doi.index[j] - expect).abs() <= 1e-4,
            "cell {j}: index {} closed form {expect}",
            doi.index[j]
        );
        if j >= nd {
            assert!(
                (doi.index[j] - 1.0).abs() <= 1e-9,
                "unseen cell {j}: {}",
                doi.index[j]
            );
        }
    }
    assert_eq!(doi.shifted_outside_bounds, 0);
    let top = doi.normalised.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    assert!(
        (top - 1.0).abs() < 1e-12,
        "normalised to 1 at its largest: {top}"
    );
}

/// The block case without constraints (α_s = 1e-3) and its first run,
/// handed to `f`.
fn with_base_run(f: impl FnOnce(&BlockCase, &Problem, &InversionSettings, &RunResult)) {
    let c = BlockCase::new(Noise::Uniform(77));
    let k = c.constraints(&[]);
    let unc = vec![SIGMA; c.data.len()];
    let pb = c.problem(&k, &unc);
    let s = InversionSettings {
        alpha_s: 1e-3,
        ..Default::default()
    };
    let base = invert(&c.op, &pb, &s, &Silent).unwrap();
    f(&c, &pb, &s, &base);
}

/// Gravity data lose resolution with depth, so the index grows with depth:
/// the top layer is data-determined (layer median below 0.3) and the deepest
/// follows its reference (above 0.5), every lower-half layer above every
/// upper-half one. Without the base-level move of the second run's data the
/// deep layers come out negative (they cancel the slab field of the shift):
/// this test also guards that.
#[test]
fn the_index_grows_with_depth_for_gravity_data() {
    with_base_run(|c, pb, s, base| {
        let doi = depth_of_investigation(&c.op, pb, s, base, 0.1, &Silent).unwrap();
        let prof = doi_profile(pb, &doi.normalised, 0.4);
        let meds: Vec<f64> = prof.layers.iter().map(|l| l.1).collect();
        assert_eq!(meds.len(), 8);
        assert!(meds[0] < 0.3, "top layer median {meds:?}");
        assert!(meds[7] > 0.5, "bottom layer median {meds:?}");
        // Every layer of the lower half is less data-determined than every
        // layer of the upper half.
        let top_max = meds[..4].iter().cloned().fold(f64::MIN, f64::max);
        let bottom_min = meds[4..].iter().cloned().fold(f64::MAX, f64::min);
        assert!(
            bottom_min > top_max,
            "medians should rise with depth: {meds:?}"
        );
        assert!(prof.depth_m.is_some(), "{prof:?}");
        assert!(prof.layers[0].0 > 0.0 && prof.layers[7].0 > prof.layers[0].0);
        // Both runs fit the data.
        for r in [base, &doi.shifted] {
            assert!(
                (r.summary.chi_factor - 1.0).abs() <= 0.021,
                "{:?}",
                r.summary
            );
        }
        assert!(doi.index.iter().all(|v| v.is_finite()));
    });
}

/// Holding the columns under the block at zero (positivity everywhere) leaves
/// no way to make the peak over it: the feature is required. Holding a far
/// corner changes nothing the data care about: not required.
#[test]
fn a_feature_under_the_anomaly_is_required_and_one_far_away_is_not() {
    let c = BlockCase::new(Noise::Uniform(77));
    let k = c.constraints(&[bounded(0.0, Some(1.0))]);
    let unc = vec![SIGMA; c.data.len()];
    let pb = c.problem(&k, &unc);
    let s = InversionSettings::default();
    let base = invert(&c.op, &pb, &s, &Silent).unwrap();
    let [nx, ny, _] = c.mesh.shape();
    let region = |i0: usize, i1: usize, j0: usize, j1: usize| -> Vec<bool> {
        (0..c.mesh.n_cells())
            .map(|cell| {
                let (i, j) = (cell % nx, (cell / nx) % ny);
                (i0..i1).contains(&i) && (j0..j1).contains(&j)
            })
            .collect()
    };
    let under = region(5, 11, 5, 11);
    let (rep, held) =
        feature_test(&c.op, &pb, &s, &base, &under, 0.0, Hold::Fixed, &Silent).unwrap();
    assert_eq!(rep.verdict, "required", "{rep:?}");
    assert!(!rep.target_reached);
    assert!(rep.chi_factor_held > 1.5, "{rep:?}");
    assert_eq!(rep.region_cells, 6 * 6 * 8);
    // The held cells really were held.
    for (a, &cell) in c.active.iter().enumerate() {
        if under[cell] {
            assert_eq!(held.model[a], 0.0);
        }
    }
    let corner = region(0, 2, 0, 2);
    let (rep, _) = feature_test(
        &c.op,
        &pb,
        &s,
        &base,
        &corner,
        0.0,
        Hold::Referenced { weight: 1e4 },
        &Silent,
    )
    .unwrap();
    assert!(rep.target_reached, "{rep:?}");
    assert_eq!(rep.verdict, "not required", "{rep:?}");
    assert!(rep.phi_m_change.abs() < 0.5, "{rep:?}");
    // Bad requests are refused with a reason.
    let none = vec![false; c.mesh.n_cells()];
    let e = feature_test(&c.op, &pb, &s, &base, &none, 0.0, Hold::Fixed, &Silent).unwrap_err();
    assert!(e.to_string().contains("no free active cell"), "{e}");
    let e = depth_of_investigation(&c.op, &pb, &s, &base, 0.0, &Silent).unwrap_err();
    assert!(e.to_string().contains("non-zero"), "{e}");
}

/// The checkerboard shift (±0.1 g/cm³ in square blocks, the same in every
/// layer) on the block case: the index starts near 0 in the top layer (the
/// stations sit on it), reaches near 1 at the bottom, and grows layer by
/// layer; structure of 100 m blocks is decided deeper than structure of
/// 50 m blocks, as the field of a block pattern fades with depth over about
/// the block's size (Blakely 1995: the field of a harmonic of wavenumber k
/// falls as e^(−kz)). Measured: 50 m −0.00, 0.45, 0.80, 0.94, 0.98, 1.00,
/// 1.00, 1.00; 100 m 0.04, 0.15, 0.36, 0.53, 0.68, 0.79, 0.88, 0.93.
#[test]
fn a_checkerboard_shift_shows_larger_structure_decided_deeper() {
    use fieldstone_core::invert::appraise::{
        depth_of_investigation_pattern, doi_shift, DoiPattern,
    };
    with_base_run(|c, pb, s, base| {
        let mut profiles = Vec::new();
        for b in [50.0, 100.0] {
            let (sh, block) = doi_shift(pb, 0.1, DoiPattern::Checkerboard { block_m: Some(b) });
            assert_eq!(block, Some(b));
            // Half the free cells up, half down: no mean shift.
            let up = sh.iter().filter(|v| **v > 0.0).count();
            assert_eq!(2 * up, sh.len());
            let doi = depth_of_investigation_pattern(&c.op, pb, s, base, &sh, &Silent).unwrap();
            assert!((doi.shifted.summary.chi_factor - 1.0).abs() <= 0.02);
            assert!(
                doi.data_level_shift.abs() < 1e-9,
                "{}",
                doi.data_level_shift
            );
            let meds: Vec<f64> = doi_profile(pb, &doi.index, 0.4)
                .layers
                .iter()
                .map(|l| l.1)
                .collect();
            assert!(meds[0].abs() < 0.1 && meds[7] > 0.85, "{b} m: {meds:?}");
            assert!(
                meds.windows(2).all(|w| w[1] > w[0] - 0.01),
                "{b} m: {meds:?}"
            );
            profiles.push(meds);
        }
        for layer in 1..6 {
            assert!(
                profiles[1][layer] < profiles[0][layer] - 0.1,
                "layer {layer}: {profiles:?}"
            );
        }
        // The automatic block is a quarter of the core's shorter side.
        let (_, auto) = doi_shift(pb, 0.1, DoiPattern::Checkerboard { block_m: None });
        assert_eq!(auto, Some(100.0));
    });
}
