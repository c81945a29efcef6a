//! The FFT (block-Toeplitz) operator against the dense operator on the same
//! gridded problem, and the adjoint identity for both.

use fieldstone_core::mesh::recipe::MeshRecipe;
use fieldstone_core::operator::dense::{DenseOperator, Survey};
use fieldstone_core::operator::fft::FftOperator;
use fieldstone_core::operator::Operator;
use fieldstone_core::physics::magnetic::InducingField;
use fieldstone_core::progress::Silent;

fn pseudo(n: usize, seed: usize) -> Vec<f64> {
    (0..n)
        .map(|j| (((j + seed) * 2_654_435_761) % 1000) as f64 / 1000.0 - 0.4)
        .collect()
}

#[test]
fn fft_and_dense_agree_and_both_are_adjoint() {
    let mesh = MeshRecipe::uniform(20.0, 10.0, [0.0, 240.0], [0.0, 180.0], 50.0, 80.0)
        .build()
        .unwrap();
    let [nx, ny, _] = mesh.shape();
    let active: Vec<usize> = (0..mesh.n_cells()).filter(|c| c % 11 != 3).collect();
    let mask: Vec<bool> = (0..nx * ny).map(|c| c % 7 != 2).collect();
    let z = 51.0;
    let stations: Vec<[f64; 3]> = (0..nx * ny)
        .filter(|&c| mask[c])
        .map(|c| {
            let p = mesh.centre(c % nx, c / nx, 0);
            [p[0], p[1], z]
        })
        .collect();
    for survey in [
        Survey::Gravity,
        Survey::Magnetic(InducingField {
            intensity_nt: 52_000.0,
            inclination_deg: -61.0,
            declination_deg: 11.0,
        }),
    ] {
        let dense =
            DenseOperator::build(&mesh, &active, &stations, survey, 1 << 30, &Silent).unwrap();
        let fft = FftOperator::build(&mesh, &active, z, &mask, survey).unwrap();
        assert_eq!(
            (fft.n_data(), fft.n_cells()),
            (dense.n_data(), dense.n_cells())
        );
        let m = pseudo(dense.n_cells(), 3);
        let (mut a, mut b) = (vec![0.0; dense.n_data()], vec![0.0; dense.n_data()]);
        dense.apply(&m, &mut a);
        fft.apply(&m, &mut b);
        let scale = a.iter().fold(0.0f64, |s, v| s.max(v.abs()));
        for i in 0..a.len() {
            assert!(
                (a[i] - b[i]).abs() <= 1e-5 * scale,
                "{survey:?} datum {i}: {} vs {}",
                a[i],
                b[i]
            );
        }
        let r = pseudo(dense.n_data(), 7);
        let (mut ta, mut tb) = (vec![0.0; dense.n_cells()], vec![0.0; dense.n_cells()]);
        dense.apply_t(&r, &mut ta);
        fft.apply_t(&r, &mut tb);
        let tscale = ta.iter().fold(0.0f64, |s, v| s.max(v.abs()));
        for j in 0..ta.len() {
            assert!(
                (ta[j] - tb[j]).abs() <= 1e-5 * tscale,
                "{survey:?} cell {j}: {} vs {}",
                ta[j],
                tb[j]
            );
        }
        // Adjoint: ⟨Gm, r⟩ = ⟨m, Gᵀr⟩ (f64 FFT: 1e-10).
        let lhs: f64 = b.iter().zip(&r).map(|(x, y)| x * y).sum();
        let rhs: f64 = m.iter().zip(&tb).map(|(x, y)| x * y).sum();
        assert!(
            (lhs - rhs).abs() <= 1e-10 * lhs.abs().max(rhs.abs()),
            "{lhs} vs {rhs}"
        );
        let (na, nb) = (dense.column_norms_sq(), fft.column_norms_sq());
        let nscale = na.iter().fold(0.0f64, |s, v| s.max(*v));
        for j in 0..na.len() {
            assert!(
                (na[j] - nb[j]).abs() <= 1e-5 * nscale,
                "norm {j}: {} vs {}",
                na[j],
                nb[j]
            );
        }
        assert_eq!(fft.kind(), "fft");
    }
}
