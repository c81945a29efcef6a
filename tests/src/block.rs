//! The block-in-a-half-space gravity case several inversion tests share: a
//! 16 × 16 × 8 mesh of 25 m cells (400 m square, 200 m deep), 256 stations
//! 1 m above its cell centres, and a 0.3 g/cm³ block in columns 6–9 × 6–9,
//! layers 4–5 (50–100 m deep), with noise of known standard deviation so
//! the target φ_d = N is the expected misfit. Invented for the tests.

use fieldstone_core::constraint::build::{build, Assignments, ConstraintArrays, Defaults, Layer};
use fieldstone_core::constraint::region::{Inputs, Region};
use fieldstone_core::invert::solver::Problem;
use fieldstone_core::mesh::recipe::MeshRecipe;
use fieldstone_core::mesh::topo::active_cells;
use fieldstone_core::mesh::TensorMesh;
use fieldstone_core::operator::dense::{DenseOperator, Survey};
use fieldstone_core::operator::Operator;
use fieldstone_core::progress::Silent;

/// Standard deviation of the noise added to the data (mGal).
pub const SIGMA: f64 = 0.002;

/// The noise added to the block's field.
#[derive(Debug, Clone, Copy)]
pub enum Noise {
    /// Gaussian (Box–Muller on a linear congruential generator) from this seed.
    Gaussian(u64),
    /// Uniform with standard deviation SIGMA (width √12·SIGMA) from this seed.
    Uniform(u64),
}

/// The case: mesh, dense operator over every cell, the true model and the
/// noisy data.
pub struct BlockCase {
    pub mesh: TensorMesh,
    pub op: DenseOperator,
    pub active: Vec<usize>,
    pub truth: Vec<f64>,
    pub data: Vec<f64>,
}

/// The next number of Knuth's MMIX linear congruential generator.
fn lcg(seed: &mut u64) -> u64 {
    *seed = seed
        .wrapping_mul(6364136223846793005)
        .wrapping_add(1442695040888963407);
    *seed
}

impl BlockCase {
    pub fn new(noise: Noise) -> BlockCase {
        let mesh = MeshRecipe::uniform(25.0, 25.0, [0.0, 400.0], [0.0, 400.0], 0.0, 200.0)
            .build()
            .unwrap();
        let active: Vec<usize> = (0..mesh.n_cells()).collect();
        let stations: Vec<[f64; 3]> = (0..256)
            .map(|s| {
                [
                    12.5 + 25.0 * (s % 16) as f64,
                    12.5 + 25.0 * (s / 16) as f64,
                    1.0,
                ]
            })
            .collect();
        let op = DenseOperator::build(&mesh, &active, &stations, Survey::Gravity, 1 << 30, &Silent)
            .unwrap();
        let [nx, ny, _] = mesh.shape();
        let truth: Vec<f64> = (0..mesh.n_cells())
            .map(|c| {
                let (i, j, k) = (c % nx, (c / nx) % ny, c / (nx * ny));
                if (6..10).contains(&i) && (6..10).contains(&j) && (4..6).contains(&k) {
                    0.3
                } else {
                    0.0
                }
            })
            .collect();
        let mut data = vec![0.0; 256];
        op.apply(&truth, &mut data);
        match noise {
            Noise::Gaussian(mut seed) => {
                let mut uni = || ((lcg(&mut seed) >> 11) as f64 + 0.5) / (1u64 << 53) as f64;
                for d in &mut data {
                    *d += SIGMA
                        * (-2.0 * uni().ln()).sqrt()
                        * (2.0 * std::f64::consts::PI * uni()).cos();
                }
            }
            Noise::Uniform(mut seed) => {
                for d in &mut data {
                    let u = (lcg(&mut seed) >> 11) as f64 / (1u64 << 53) as f64;
                    *d += SIGMA * 3.464 * (u - 0.5);
                }
            }
        }
        BlockCase {
            mesh,
            op,
            active,
            truth,
            data,
        }
    }

    /// The constraint arrays `layers` build on the whole mesh (density
    /// defaults, no named inputs).
    pub fn constraints(&self, layers: &[Layer]) -> ConstraintArrays {
        let act = active_cells(&self.mesh, None, false, false).unwrap();
        build(
            &self.mesh,
            &act,
            layers,
            Defaults::density(),
            &Inputs::default(),
        )
        .unwrap()
        .0
    }

    /// The problem of this case with constraint arrays `k` and data
    /// uncertainties `unc`.
    pub fn problem<'a>(&'a self, k: &'a ConstraintArrays, unc: &'a [f64]) -> Problem<'a> {
        Problem {
            mesh: &self.mesh,
            constraints: k,
            active: &self.active,
            data: &self.data,
            uncertainty: unc,
            reference_elevation_m: 1.0,
        }
    }
}

/// A layer bounding the whole model below by `lower` and above by `upper`.
pub fn bounded(lower: f64, upper: Option<f64>) -> Layer {
    Layer {
        name: "positive".into(),
        enabled: true,
        region: Region::Whole,
        assign: Assignments {
            lower: Some(lower),
            upper,
            ..Default::default()
        },
    }
}
