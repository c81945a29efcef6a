//! Synthetic recovery tests of the constrained inversion. Each builds a small
//! gravity problem with a known block, noise of known standard deviation and
//! uncertainties equal to it, so the target φ_d = N is the expected misfit.

use fieldstone_core::constraint::build::{
    build, Assignments, ConstraintArrays, Contact, ContactAlong, Defaults, Layer,
};
use fieldstone_core::constraint::region::{Inputs, Region};
use fieldstone_core::grid::Grid2;
use fieldstone_core::invert::solver::{invert, InversionError, Problem, RunResult};
use fieldstone_core::invert::InversionSettings;
use fieldstone_core::mesh::topo::active_cells;
use fieldstone_core::operator::dense::Survey;
use fieldstone_core::operator::Operator;
use fieldstone_core::progress::Silent;
use fieldstone_tests::block::{bounded, BlockCase, Noise, SIGMA};

fn run(c: &BlockCase, k: &ConstraintArrays, s: &InversionSettings) -> RunResult {
    run_with(&c.op, c, k, s)
}

fn run_with<O: Operator>(
    op: &O,
    c: &BlockCase,
    k: &ConstraintArrays,
    s: &InversionSettings,
) -> RunResult {
    let unc = vec![SIGMA; c.data.len()];
    invert(op, &c.problem(k, &unc), s, &Silent).unwrap()
}

fn within_target(r: &RunResult) -> bool {
    (r.summary.phi_d - r.summary.target_phi_d).abs() <= 0.02 * r.summary.target_phi_d
}

#[test]
fn a_block_is_recovered_where_it_is_at_the_target_misfit() {
    let c = BlockCase::new(Noise::Gaussian(2024));
    let k = c.constraints(&[]);
    let r = run(&c, &k, &InversionSettings::default());
    assert!(within_target(&r), "{:?}", r.summary);
    // Centroid of the positive anomaly within one cell laterally of the block centre (200, 200).
    let [nx, ny, _] = c.mesh.shape();
    let (mut sx, mut sy, mut sw) = (0.0, 0.0, 0.0);
    let max = r.model.iter().copied().fold(0.0, f64::max);
    for (cell, &v) in r.model.iter().enumerate() {
        if v > 0.5 * max {
            let p = c.mesh.centre(cell % nx, (cell / nx) % ny, cell / (nx * ny));
            sx += v * p[0];
            sy += v * p[1];
            sw += v;
        }
    }
    let (cx, cy) = (sx / sw, sy / sw);
    assert!(
        (cx - 200.0).abs() <= 25.0 && (cy - 200.0).abs() <= 25.0,
        "centroid ({cx}, {cy})"
    );
    assert_eq!(r.summary.operator, "dense");
    assert!(
        r.log.len() >= 2
            && r.log
                .windows(2)
                .all(|w| w[1].beta <= w[0].beta * 1.0001 || w[1].phi_d <= w[0].phi_d * 1.5)
    );
    let _ = &c.truth;
}

#[test]
fn bounds_hold_for_every_cell() {
    let c = BlockCase::new(Noise::Gaussian(2024));
    let k = c.constraints(&[bounded(0.0, Some(0.25))]);
    let r = run(&c, &k, &InversionSettings::default());
    assert!(
        r.model.iter().all(|v| (0.0..=0.25).contains(v)),
        "min {} max {}",
        r.summary.model_min,
        r.summary.model_max
    );
    assert!(within_target(&r), "{:?}", r.summary);
    assert!(r.summary.cells_at_lower_bound > 0);
}

#[test]
fn a_trusted_reference_is_honoured_and_a_guess_is_not() {
    let c = BlockCase::new(Noise::Gaussian(2024));
    // The top two layers referenced to 0.1 (a wrong guess; the truth is 0).
    let region = Region::Box {
        x: [0.0, 400.0],
        y: [0.0, 400.0],
        z: [-50.0, 0.0],
    };
    let layer = |w: f64| Layer {
        name: "cover".into(),
        enabled: true,
        region: region.clone(),
        assign: Assignments {
            reference: Some(0.1),
            reference_weight: Some(w),
            ..Default::default()
        },
    };
    let s = InversionSettings {
        alpha_s: 1e-3,
        ..Default::default()
    };
    let [nx, ny, nz] = c.mesh.shape();
    let top: Vec<usize> = (0..c.mesh.n_cells())
        .filter(|&cell| cell / (nx * ny) >= nz - 2)
        .collect();
    let strong = run(&c, &c.constraints(&[layer(1e6)]), &s);
    let worst = top
        .iter()
        .map(|&cell| (strong.model[cell] - 0.1).abs() / 0.1)
        .fold(0.0, f64::max);
    assert!(worst <= 0.05, "trusted reference departed by {worst}");
    let weak = run(&c, &c.constraints(&[layer(1e-3)]), &s);
    let mean = top.iter().map(|&cell| weak.model[cell]).sum::<f64>() / top.len() as f64;
    assert!(
        (mean - 0.1).abs() > 0.05,
        "a weakly weighted reference should not hold the model: mean {mean}"
    );
}

#[test]
fn a_sharp_contact_allows_a_larger_vertical_jump() {
    let c = BlockCase::new(Noise::Gaussian(2024));
    let mut base = Grid2::new_empty(-100.0, -100.0, 50.0, 50.0, 14, 14).unwrap();
    base.values.iter_mut().for_each(|v| *v = -50.0);
    let mut inputs = Inputs::default();
    inputs.surfaces.insert("contact".into(), base);
    let act = active_cells(&c.mesh, None, false, false).unwrap();
    let sharp = Layer {
        name: "contact".into(),
        enabled: true,
        region: Region::Whole,
        assign: Assignments {
            sharp_contact: Some(Contact {
                factor: 1e-3,
                along: ContactAlong::Surface {
                    name: "contact".into(),
                },
            }),
            ..Default::default()
        },
    };
    let k_sharp = build(&c.mesh, &act, &[sharp], Defaults::density(), &inputs)
        .unwrap()
        .0;
    let k_smooth = c.constraints(&[]);
    let s = InversionSettings::default();
    let (a, b) = (run(&c, &k_sharp, &s), run(&c, &k_smooth, &s));
    assert!(within_target(&a) && within_target(&b));
    // Mean |m(below) − m(above)| across the contact (between layers 5 and 6, z = −50).
    let [nx, ny, _] = c.mesh.shape();
    let jump = |m: &[f64]| {
        (0..nx * ny)
            .map(|col| (m[col + nx * ny * 5] - m[col + nx * ny * 6]).abs())
            .sum::<f64>()
            / (nx * ny) as f64
    };
    assert!(
        jump(&a.model) > 1.5 * jump(&b.model),
        "sharp {} vs smooth {}",
        jump(&a.model),
        jump(&b.model)
    );
}

#[test]
fn focusing_makes_a_more_compact_model_at_the_same_misfit() {
    let c = BlockCase::new(Noise::Gaussian(2024));
    let k = c.constraints(&[bounded(0.0, Some(0.5))]);
    let l2 = run(&c, &k, &InversionSettings::default());
    let focused = run(
        &c,
        &k,
        &InversionSettings {
            norms: [0.0, 2.0, 2.0, 2.0],
            alpha_s: 1e-2,
            ..Default::default()
        },
    );
    assert!(
        within_target(&l2) && within_target(&focused),
        "{:?} / {:?}",
        l2.summary,
        focused.summary
    );
    let compact = |m: &[f64]| {
        let max = m.iter().copied().fold(0.0, f64::max);
        m.iter().filter(|v| **v > 0.5 * max).count()
    };
    assert!(
        compact(&focused.model) < compact(&l2.model),
        "focused {} vs L2 {}",
        compact(&focused.model),
        compact(&l2.model)
    );
    assert!(focused.log.iter().any(|r| r.epsilon.is_some()));
}

#[test]
fn fixed_cells_keep_their_values_exactly_and_bad_settings_are_refused() {
    let c = BlockCase::new(Noise::Gaussian(2024));
    let held = Layer {
        name: "held".into(),
        enabled: true,
        region: Region::Box {
            x: [0.0, 100.0],
            y: [0.0, 100.0],
            z: [-200.0, 0.0],
        },
        assign: Assignments {
            starting: Some(0.05),
            fixed: true,
            ..Default::default()
        },
    };
    let k = c.constraints(&[held]);
    let r = run(&c, &k, &InversionSettings::default());
    for (cell, v) in r.model.iter().enumerate() {
        if k.fixed[cell] {
            assert_eq!(*v, 0.05);
        }
    }
    let unc0 = vec![0.0; c.data.len()];
    let pb = Problem {
        mesh: &c.mesh,
        constraints: &k,
        active: &c.active,
        data: &c.data,
        uncertainty: &unc0,
        reference_elevation_m: 1.0,
    };
    assert!(matches!(
        invert(&c.op, &pb, &InversionSettings::default(), &Silent),
        Err(InversionError::Uncertainty { index: 0, .. })
    ));
    let all = c.constraints(&[Layer {
        name: "all".into(),
        enabled: true,
        region: Region::Whole,
        assign: Assignments {
            fixed: true,
            ..Default::default()
        },
    }]);
    let unc = vec![SIGMA; c.data.len()];
    let pb = Problem {
        mesh: &c.mesh,
        constraints: &all,
        active: &c.active,
        data: &c.data,
        uncertainty: &unc,
        reference_elevation_m: 1.0,
    };
    assert!(invert(&c.op, &pb, &InversionSettings::default(), &Silent)
        .unwrap_err()
        .to_string()
        .contains("fixed"));
    let mut nan = c.data.clone();
    nan[3] = f64::NAN;
    let pb = Problem {
        mesh: &c.mesh,
        constraints: &k,
        active: &c.active,
        data: &nan,
        uncertainty: &unc,
        reference_elevation_m: 1.0,
    };
    assert!(matches!(
        invert(&c.op, &pb, &InversionSettings::default(), &Silent),
        Err(InversionError::Data { index: 3 })
    ));
}

#[test]
fn dense_and_fft_runs_give_the_same_model() {
    use fieldstone_core::operator::fft::FftOperator;
    let c = BlockCase::new(Noise::Gaussian(2024));
    let k = c.constraints(&[bounded(0.0, None)]);
    let dense = run(&c, &k, &InversionSettings::default());
    let fft =
        FftOperator::build(&c.mesh, &c.active, 1.0, &vec![true; 256], Survey::Gravity).unwrap();
    let f = run_with(&fft, &c, &k, &InversionSettings::default());
    assert_eq!(f.summary.operator, "fft");
    let scale = dense.model.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    let diff = dense
        .model
        .iter()
        .zip(&f.model)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    assert!(
        diff <= 1e-3 * scale,
        "models differ by {diff} (scale {scale})"
    );
}

/// The same inputs give the same model, bit for bit, on one thread and on
/// three: every parallel sum runs over fixed chunks or groups, added in
/// order. Focusing with bounds exercises every path of the solver; both
/// operators are checked.
#[test]
fn results_do_not_depend_on_the_thread_count() {
    use fieldstone_core::operator::fft::FftOperator;
    let c = BlockCase::new(Noise::Gaussian(2024));
    let k = c.constraints(&[bounded(0.0, Some(0.5))]);
    let s = InversionSettings {
        norms: [0.0, 2.0, 2.0, 2.0],
        max_irls_iterations: 3,
        ..Default::default()
    };
    let fft =
        FftOperator::build(&c.mesh, &c.active, 1.0, &vec![true; 256], Survey::Gravity).unwrap();
    let on = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        pool.install(|| (run(&c, &k, &s).model, run_with(&fft, &c, &k, &s).model))
    };
    let (d1, f1) = on(1);
    let (d3, f3) = on(3);
    assert!(d1.iter().zip(&d3).all(|(a, b)| a.to_bits() == b.to_bits()));
    assert!(f1.iter().zip(&f3).all(|(a, b)| a.to_bits() == b.to_bits()));
}

/// Numerical faults: each setting that leaves nothing sensible to compute is
/// refused with a message saying which, and a run asked for a misfit the
/// noise does not allow stops saying so, with no NaN anywhere in its output.
#[test]
fn numerical_faults_are_refused_or_reported_and_never_give_nan() {
    let c = BlockCase::new(Noise::Gaussian(2024));
    let k = c.constraints(&[]);
    let try_with = |data: &[f64], unc: &[f64], s: &InversionSettings| {
        let pb = Problem {
            mesh: &c.mesh,
            constraints: &k,
            active: &c.active,
            data,
            uncertainty: unc,
            reference_elevation_m: 1.0,
        };
        invert(&c.op, &pb, s, &Silent)
    };
    let unc = vec![SIGMA; c.data.len()];
    let d = InversionSettings::default();
    // Negative, infinite and NaN uncertainties name the datum.
    for bad in [-SIGMA, f64::INFINITY, f64::NAN] {
        let mut u = unc.clone();
        u[7] = bad;
        let e = try_with(&c.data, &u, &d).unwrap_err();
        assert!(
            matches!(e, InversionError::Uncertainty { index: 7, .. }),
            "{e}"
        );
    }
    // Data all NaN.
    let nan = vec![f64::NAN; c.data.len()];
    assert!(matches!(
        try_with(&nan, &unc, &d).unwrap_err(),
        InversionError::Data { index: 0 }
    ));
    // β = 0, cooling that never cools, a zero chi-factor.
    for s in [
        InversionSettings {
            beta0_ratio: 0.0,
            ..d.clone()
        },
        InversionSettings {
            cooling: 1.0,
            ..d.clone()
        },
        InversionSettings {
            chi_factor: 0.0,
            ..d.clone()
        },
    ] {
        let e = try_with(&c.data, &unc, &s).unwrap_err().to_string();
        assert!(e.contains("β settings"), "{e}");
    }
    // Bounds that exclude every value are refused by the constraint builder.
    let act = active_cells(&c.mesh, None, false, false).unwrap();
    let e = build(
        &c.mesh,
        &act,
        &[bounded(1.0, Some(0.5))],
        Defaults::density(),
        &Inputs::default(),
    )
    .unwrap_err()
    .to_string();
    assert!(e.contains("positive") && e.contains("lower"), "{e}");
    // A target far below the noise: the run stops and says why; all finite.
    let s = InversionSettings {
        chi_factor: 0.01,
        max_beta_iterations: 6,
        ..d.clone()
    };
    let r = try_with(&c.data, &unc, &s).unwrap();
    assert!(
        r.summary.phi_d > r.summary.target_phi_d,
        "the target below the noise was reached"
    );
    assert!(
        !r.summary.stopped_because.is_empty()
            && !r.summary.stopped_because.contains("target misfit reached"),
        "{}",
        r.summary.stopped_because
    );
    assert!(r.model.iter().chain(&r.predicted).all(|v| v.is_finite()));
    assert!(r.summary.phi_m.is_finite() && r.summary.beta.is_finite());
}
