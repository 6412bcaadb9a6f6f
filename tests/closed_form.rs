//! Closed forms against exact or limiting results computed here, each with its source named.

use ohmstack_core::base::units::ETA0;
use ohmstack_core::closed_form::microstrip::Microstrip;

#[test]
fn microstrip_tends_to_parallel_plate_for_very_wide_strips() {
    // Exact limit for w/h → ∞ with t = 0: Z0 → η0·h/(w·√εr) (parallel-plate guide, fringing vanishing).
    let m = Microstrip {
        w: 0.2,
        h: 1e-4,
        t: 0.0,
        er: 4.0,
    };
    let r = m.analyze().unwrap();
    let pp = ETA0 * m.h / m.w / 2.0;
    assert!((r.z0 - pp).abs() / pp < 0.005, "{} vs {pp}", r.z0);
}
