//! Every allocation that follows the user's data is estimated first and
//! refused, with the size and what to change, when it would not fit. Each test
//! sets the memory available (the functions take it, or the
//! FIELDSTONE_MEMORY_MB variable in a child process) so the refusal does not
//! depend on this machine.

use fieldstone_core::memory::{check, SHARE};
use fieldstone_core::mesh::recipe::{MeshRecipe, BYTES_PER_CELL};
use fieldstone_core::operator::dense::{DenseOperator, OperatorError, Survey};
use fieldstone_core::operator::fft::{FftOperator, Heights};
use fieldstone_core::progress::Silent;

#[test]
fn a_mesh_too_big_for_memory_is_refused_before_it_is_built() {
    // 200 × 200 × 50 = 2 000 000 cells at 25 m: 448 MB of cell arrays.
    let r = MeshRecipe::uniform(25.0, 25.0, [0.0, 5000.0], [0.0, 5000.0], 0.0, 1250.0);
    let cells = 200u64 * 200 * 50;
    let need = cells * BYTES_PER_CELL;
    assert!(r.build_within(2 * need).is_ok());
    let e = r.build_within(need).unwrap_err().to_string();
    assert!(e.contains("2000000 cells") && e.contains("448 MB"), "{e}");
    assert!(e.contains("coarser cells"), "{e}");
}

#[test]
fn an_fft_operator_too_big_for_memory_is_refused() {
    let mesh = MeshRecipe::uniform(50.0, 50.0, [0.0, 2000.0], [0.0, 2000.0], 0.0, 500.0)
        .build()
        .unwrap();
    let [nx, ny, nz] = mesh.shape();
    let active: Vec<usize> = (0..mesh.n_cells()).collect();
    let mask = vec![true; nx * ny];
    let need = FftOperator::bytes_needed([nx, ny, nz], 1);
    // 40 × 40 × 10 cells: 10 layers of an 80 × 80 real grid's half spectrum
    // (41 × 80 complex values, 16 bytes each), the 79 × 79 kernel row (8 bytes
    // each), and 20 bytes of maps and norms per cell.
    assert_eq!(need, 10 * (41 * 80 * 16 + 79 * 79 * 8) + 16_000 * 20);
    let ok = FftOperator::build_within(
        &mesh,
        &active,
        &Heights::Level(1.0),
        &mask,
        Survey::Gravity,
        2 * need,
    );
    assert!(ok.is_ok());
    let e = FftOperator::build_within(
        &mesh,
        &active,
        &Heights::Level(1.0),
        &mask,
        Survey::Gravity,
        need,
    )
    .err()
    .expect("refused")
    .to_string();
    assert!(e.contains("FFT operator") && e.contains("MB"), "{e}");
}

#[test]
fn a_dense_sensitivity_too_big_for_its_budget_is_refused() {
    let mesh = MeshRecipe::uniform(50.0, 50.0, [0.0, 500.0], [0.0, 500.0], 0.0, 200.0)
        .build()
        .unwrap();
    let active: Vec<usize> = (0..mesh.n_cells()).collect();
    let stations: Vec<[f64; 3]> = (0..100).map(|k| [5.0 * k as f64, 250.0, 1.0]).collect();
    let need = (stations.len() * active.len() * 4) as u64;
    let r = DenseOperator::build(
        &mesh,
        &active,
        &stations,
        Survey::Gravity,
        need - 1,
        &Silent,
    );
    match r {
        Err(OperatorError::TooBig { data, cells, .. }) => {
            assert_eq!((data, cells), (100, active.len()))
        }
        Err(e) => panic!("wrong refusal: {e}"),
        Ok(_) => panic!("a sensitivity above its budget was built"),
    }
}

#[test]
fn the_share_of_memory_one_allocation_may_take() {
    let avail = 1_000_000_000u64;
    let edge = (SHARE * avail as f64) as u64;
    assert!(check("x", edge, avail, "").is_ok());
    assert!(check("x", edge + 1, avail, "").is_err());
}

/// The import estimate follows the file: rows from its size and first
/// lines, bytes from the column kinds (large-input benchmark: estimated
/// 800 MB for 10 million readings, peak 695 MB measured).
#[test]
fn the_import_estimate_scales_with_the_file() {
    use fieldstone_core::survey::import::import_memory_needed;
    use fieldstone_core::table::ColumnKind;
    let p = std::env::temp_dir().join(format!("fieldstone-mem-import-{}.csv", std::process::id()));
    let mut t = String::from("line,x,y,mag_nt\n");
    for k in 0..1000 {
        t.push_str(&format!("10,{}.00,7000000.00,55000.{k:03}\n", 500_000 + k));
    }
    std::fs::write(&p, &t).unwrap();
    let head = &t.as_bytes()[..4096];
    let kinds = [ColumnKind::Number; 4];
    let need = import_memory_needed(&p, head, &kinds);
    let exact = 1001 * (8 + 32 + 4 * 8);
    assert!(
        (need as f64 - exact as f64).abs() < 0.05 * exact as f64,
        "{need} vs {exact}"
    );
    std::fs::remove_file(&p).ok();
}
