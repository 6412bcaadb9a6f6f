//! Native side of the WASM-vs-native comparison: the same recompute as the WASM export, timed with `Instant`.
//! `cargo run --release -p ohmstack-bench-wasm -- [N]` prints one JSON object (best of N, ms).

fn main() {
    let n: usize = std::env::args()
        .nth(1)
        .and_then(|a| a.parse().ok())
        .unwrap_or(10);
    let p = ohmstack_bench_wasm::project();
    let mut best = f64::INFINITY;
    let mut sum = 0.0;
    for _ in 0..n.max(1) {
        let start = std::time::Instant::now();
        sum = std::hint::black_box(ohmstack_bench_wasm::recompute_once(std::hint::black_box(
            &p,
        )));
        best = best.min(start.elapsed().as_secs_f64() * 1e3);
    }
    println!("{{\"native_best_ms\": {best:.4}, \"repeats\": {n}, \"checksum\": {sum:.9}}}");
}
