//! Single-threaded microstrip throughput for the peer comparison of `cargo xtask bench` (not criterion: the other
//! side is a Python loop, so both report geometries per second over the same geometry file).
//!
//! `OHMSTACK_PEER_GEOMETRIES=file.csv cargo bench -p ohmstack-core --bench peer_microstrip`: one geometry a line,
//! `w,h,t,er[,z_reference]` in metres (as bench/peer_skrf.py writes it). Without the variable it makes its own
//! 100 000 geometries. Prints one JSON object: geometries/s with the file's thickness and at t = 0, and the largest
//! relative deviation from the file's reference impedances (a check that both sides computed the same thing).

use ohmstack_core::closed_form::microstrip::Microstrip;
use std::hint::black_box;
use std::time::Instant;

/// Best of this many passes over all geometries (the machine is shared; the minimum is the least disturbed).
const PASSES: usize = 7;

struct Geometry {
    line: Microstrip,
    reference: Option<f64>,
}

fn read(path: &str) -> Vec<Geometry> {
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("reading {path}: {e}"));
    text.lines()
        .filter(|l| !l.trim().is_empty() && !l.starts_with('#'))
        .map(|l| {
            let v: Vec<f64> = l.split(',').map(|x| x.trim().parse().unwrap()).collect();
            Geometry {
                line: Microstrip {
                    w: v[0],
                    h: v[1],
                    t: v[2],
                    er: v[3],
                },
                reference: v.get(4).copied(),
            }
        })
        .collect()
}

/// 100 000 geometries on a low-discrepancy sequence: w/h 0.1–10, h 50 µm–1.6 mm, t 35 µm, er 2.2–10.
fn generated() -> Vec<Geometry> {
    let frac = |x: f64| x - x.floor();
    (0..100_000)
        .map(|i| {
            let i = i as f64;
            let h = 50e-6 + frac(i * 0.618_033_988_749_895) * 1.55e-3;
            let u = 0.1 * 100f64.powf(frac(i * 0.414_213_562_373_095));
            let er = 2.2 + frac(i * 0.732_050_807_568_877) * 7.8;
            Geometry {
                line: Microstrip {
                    w: u * h,
                    h,
                    t: 35e-6,
                    er,
                },
                reference: None,
            }
        })
        .collect()
}

/// Best geometries/s over [`PASSES`] passes, and the impedances of the last pass.
fn rate(lines: &[Microstrip]) -> (f64, Vec<f64>) {
    let mut best = f64::INFINITY;
    let mut z = Vec::with_capacity(lines.len());
    for _ in 0..PASSES {
        z.clear();
        let start = Instant::now();
        for line in lines {
            z.push(black_box(line).analyze().map(|r| r.z0).unwrap_or(f64::NAN));
        }
        best = best.min(start.elapsed().as_secs_f64());
    }
    (lines.len() as f64 / best, z)
}

fn main() {
    let geometries = match std::env::var("OHMSTACK_PEER_GEOMETRIES") {
        Ok(path) => read(&path),
        Err(_) => generated(),
    };
    let lines: Vec<Microstrip> = geometries.iter().map(|g| g.line).collect();
    let flat: Vec<Microstrip> = lines.iter().map(|l| Microstrip { t: 0.0, ..*l }).collect();
    let (with_t, z) = rate(&lines);
    let (at_zero, _) = rate(&flat);
    let deviation = geometries
        .iter()
        .zip(&z)
        .filter_map(|(g, z)| g.reference.map(|r| ((z - r) / r).abs()))
        .fold(None, |m: Option<f64>, d| Some(m.map_or(d, |m| m.max(d))));
    println!(
        "{{\"geometries\": {}, \"per_s_finite_t\": {:.1}, \"per_s_zero_t\": {:.1}, \"max_rel_dev_vs_reference\": {}}}",
        lines.len(),
        with_t,
        at_zero,
        deviation.map_or("null".to_string(), |d| format!("{d:.3e}"))
    );
}
