//! Starter stacks: invented generic constructions of 4, 6, 8, 10 and 12 copper layers for a 1.6 mm board, each
//! with a 50 Ω trace and a 100 Ω pair on every signal layer, and the one edit that puts a starter under a project
//! (its rules kept and moved onto the new layers by position). Pure data and renaming; no models.
//!
//! The constructions are common practice, no source: solder mask 20 µm; outer and plane copper 1 oz, inner signal
//! copper ½ oz; prepreg between the outer layers and the first planes and between the cores (foil build), cores
//! of equal thickness chosen so the finished board is 1.6 mm to the nearest 10 µm of core; every dielectric the
//! generic standard FR-4 class (Dk 4.3, Df 0.018 at 1 GHz, material.rs). Replace them with the fabricator's stack.

use crate::base::units::OZ_COPPER;
use crate::design::material;
use crate::design::project::{ImpedanceRule, Project, Solve, Structure};
use crate::design::stackup::{Copper, CopperRole, Dielectric, Layer, Stackup};

/// The copper layer counts a starter exists for.
pub const STARTER_COPPER_COUNTS: [usize; 5] = [4, 6, 8, 10, 12];

/// The finished thickness the starters are built to, m (the most common board thickness: common practice).
pub const STARTER_BOARD_M: f64 = 1.6e-3;

/// Solder mask over the outer layers, m (a typical cured mask: common practice, no source).
const MASK_M: f64 = 20e-6;

/// The copper roles from top to bottom: S signal, G ground plane, P power plane. Every signal layer has a plane
/// beside it (a solid reference for its impedance), and the planes pair up so the stack is balanced.
fn roles(copper_layers: usize) -> Option<&'static str> {
    Some(match copper_layers {
        4 => "SGPS",
        6 => "SGSSPS",
        8 => "SGSPGSGS",
        10 => "SGSSPGSSGS",
        12 => "SGSSGPPGSSGS",
        _ => return None,
    })
}

/// As-bought prepreg thickness for each count, m: thinner as layers are added so the cores stay buildable
/// (common practice, no source).
fn prepreg_m(copper_layers: usize) -> f64 {
    match copper_layers {
        4 => 200e-6,
        6 => 160e-6,
        8 => 150e-6,
        10 => 130e-6,
        _ => 120e-6,
    }
}

/// The name of copper layer `k` (1-based) of `n` with role `r`: "L1 Top", "L2 GND", "L3 Signal", "L4 PWR",
/// "L8 Bottom".
fn copper_name(k: usize, n: usize, r: char) -> String {
    let what = match r {
        'G' => "GND",
        'P' => "PWR",
        _ if k == 1 => "Top",
        _ if k == n => "Bottom",
        _ => "Signal",
    };
    format!("L{k} {what}")
}

/// The short tag of a copper layer in a dielectric's name: its leading "L<n>" when it has one ("L3 Signal" → "L3"),
/// else its whole name.
pub fn copper_tag(name: &str) -> &str {
    let first = name.split_whitespace().next().unwrap_or(name);
    let numbered =
        first.len() > 1 && first.starts_with('L') && first[1..].chars().all(|c| c.is_ascii_digit());
    if numbered {
        first
    } else {
        name
    }
}

/// The name a dielectric of `kind` ("Prepreg", "Core") gets from the copper above and below it:
/// "Prepreg L2–L3", "Prepreg under L8", "Core over L1".
pub fn dielectric_name(kind: &str, above: Option<&str>, below: Option<&str>) -> String {
    match (above, below) {
        (Some(a), Some(b)) => format!("{kind} {}–{}", copper_tag(a), copper_tag(b)),
        (Some(a), None) => format!("{kind} under {}", copper_tag(a)),
        (None, Some(b)) => format!("{kind} over {}", copper_tag(b)),
        (None, None) => kind.to_string(),
    }
}

/// A core or prepreg named `name` of the material preset `preset_id` (the first preset if the id is unknown).
pub fn laminate(name: String, preset_id: &str, thickness_m: f64) -> Dielectric {
    let p = material::preset(preset_id).unwrap_or(&material::PRESETS[0]);
    Dielectric {
        name,
        material: p.name.to_string(),
        thickness_m,
        dk: p.dk,
        df: p.df,
        spec_freq_hz: p.spec_freq_hz,
        construction: None,
    }
}

/// The starter stack of `copper_layers` copper layers, top to bottom; `outer_plating_m` (the project's) is added
/// to the outer layers' ½ oz base foil so the project's plating stays valid. `None` for a count without a starter.
pub fn stack(copper_layers: usize, outer_plating_m: Option<f64>) -> Option<Stackup> {
    let roles: Vec<char> = roles(copper_layers)?.chars().collect();
    let n = roles.len();
    let coppers: Vec<Copper> = roles
        .iter()
        .enumerate()
        .map(|(i, &r)| {
            let outer = i == 0 || i + 1 == n;
            let thickness_m = match (outer, r) {
                (true, _) => outer_plating_m.map_or(OZ_COPPER, |p| 0.5 * OZ_COPPER + p),
                (false, 'S') => 0.5 * OZ_COPPER,
                _ => OZ_COPPER,
            };
            Copper {
                name: copper_name(i + 1, n, r),
                thickness_m,
                role: if r == 'S' {
                    CopperRole::Signal
                } else {
                    CopperRole::Plane
                },
                fill_pct: None,
                roughness: None,
            }
        })
        .collect();
    let mask = material::PRESETS
        .iter()
        .find(|p| p.used_for == material::PresetUse::Mask)
        .map_or("fr4", |p| p.id);
    let mut layers = vec![Layer::SolderMask(laminate("Top mask".into(), mask, MASK_M))];
    for (i, c) in coppers.iter().enumerate() {
        layers.push(Layer::Copper(c.clone()));
        if let Some(next) = coppers.get(i + 1) {
            // Copper pairs 2–3, 4–5, … sit on cores; prepreg joins everything else (foil build).
            let name = |kind| dielectric_name(kind, Some(&c.name), Some(&next.name));
            layers.push(if i % 2 == 1 {
                Layer::Core(laminate(name("Core"), "fr4", 0.0))
            } else {
                Layer::Prepreg(laminate(name("Prepreg"), "fr4", prepreg_m(n)))
            });
        }
    }
    layers.push(Layer::SolderMask(laminate(
        "Bottom mask".into(),
        mask,
        MASK_M,
    )));
    let mut stackup = Stackup { layers };
    // Cores take what the rest leaves of the board (pressing does not touch cores), rounded to 10 µm.
    let cores = (n - 2) / 2;
    let rest: f64 = (0..stackup.layers.len())
        .filter(|&i| !matches!(stackup.layers[i], Layer::Core(_)))
        .map(|i| stackup.pressed_thickness_m(i))
        .sum();
    let core_m = ((STARTER_BOARD_M - rest) / cores as f64 / 10e-6).round() * 10e-6;
    for layer in &mut stackup.layers {
        if let Layer::Core(d) = layer {
            d.thickness_m = core_m;
        }
    }
    Some(stackup)
}

/// The starter's rules: a 50 Ω trace and a 100 Ω pair side by side on every signal layer, widths solved.
pub fn rules(stackup: &Stackup) -> Vec<ImpedanceRule> {
    let rule = |name: String, layer: &str, structure, target_ohm, spacing_m| ImpedanceRule {
        name,
        layer: layer.to_string(),
        structure,
        target_ohm,
        tolerance_pct: 10.0,
        solve: Solve::Width,
        model: Default::default(),
        width_m: 120e-6,
        spacing_m,
        gap_m: None,
        partner_layer: None,
        references: Vec::new(),
        link: None,
    };
    stackup
        .layers
        .iter()
        .filter_map(Layer::copper)
        .filter(|c| c.role == CopperRole::Signal)
        .flat_map(|c| {
            let tag = copper_tag(&c.name);
            [
                rule(
                    format!("50 Ω {tag}"),
                    &c.name,
                    Structure::Single,
                    50.0,
                    None,
                ),
                rule(
                    format!("100 Ω pair {tag}"),
                    &c.name,
                    Structure::EdgePair,
                    100.0,
                    Some(200e-6),
                ),
            ]
        })
        .collect()
}

/// One line for a menu: "8 layers: signal, GND, signal, PWR, GND, signal, GND, signal".
pub fn describe(copper_layers: usize) -> Option<String> {
    let roles = roles(copper_layers)?;
    let words: Vec<&str> = roles
        .chars()
        .map(|r| match r {
            'G' => "GND",
            'P' => "PWR",
            _ => "sig",
        })
        .collect();
    Some(format!("{copper_layers} layers ({})", words.join("/")))
}

/// `project` on the starter of `copper_layers` copper layers: the stack replaced, the target thickness set to
/// 1.6 mm when none was set, and the rules kept, each moved to the new layer at the same copper position when its
/// layer is gone (to the nearest signal layer), its partner and reference planes likewise; a project without
/// rules gets the starter's. Per-layer process limits of layers that are gone are dropped. Returns the project
/// and what was moved or dropped, in the user's words, so nothing changes silently.
pub fn apply(project: &Project, copper_layers: usize) -> Option<(Project, Vec<String>)> {
    let stackup = stack(copper_layers, project.fab.outer_plating_m)?;
    let mut p = project.clone();
    let mut notes = Vec::new();
    let old: Vec<&Copper> = project
        .stackup
        .layers
        .iter()
        .filter_map(Layer::copper)
        .collect();
    let new: Vec<&Copper> = stackup.layers.iter().filter_map(Layer::copper).collect();
    // The new copper at the old one's position (top-down ordinal, clamped), of the wanted role when one is near.
    let place = |name: &str, want_plane: bool| -> Option<String> {
        if let Some(c) = new.iter().find(|c| c.name == name) {
            return Some(c.name.clone());
        }
        let k = old.iter().position(|c| c.name == name)?;
        let k = k.min(new.len() - 1);
        let fits = |c: &Copper| (c.role == CopperRole::Plane) == want_plane;
        (0..new.len())
            .flat_map(|d| [k.checked_sub(d), Some(k + d)])
            .flatten()
            .filter_map(|j| new.get(j))
            .find(|c| fits(c))
            .or(new.get(k))
            .map(|c| c.name.clone())
    };
    if p.rules.is_empty() {
        p.rules = rules(&stackup);
        notes.push(format!(
            "added a 50 Ω trace and a 100 Ω pair on each of its {} signal layers",
            roles(copper_layers).map_or(0, |r| r.matches('S').count())
        ));
    } else {
        for r in &mut p.rules {
            let was = r.layer.clone();
            if let Some(layer) = place(&r.layer, false) {
                r.layer = layer;
            }
            if let Some(partner) = r.partner_layer.clone() {
                let moved = place(&partner, false).filter(|m| *m != r.layer);
                // A partner with no distinct layer to go to: the next signal layer below the rule's.
                r.partner_layer = moved.or_else(|| {
                    let at = new.iter().position(|c| c.name == r.layer)?;
                    new[at + 1..]
                        .iter()
                        .chain(new[..at].iter().rev())
                        .find(|c| c.role == CopperRole::Signal)
                        .map(|c| c.name.clone())
                });
            }
            let refs = std::mem::take(&mut r.references);
            r.references = refs
                .iter()
                .filter_map(|x| place(x, true))
                .filter(|x| *x != r.layer)
                .collect();
            if r.layer != was {
                notes.push(format!("“{}” moved from {was} to {}", r.name, r.layer));
            }
        }
    }
    if let Some(process) = p.process.as_mut() {
        let before = process.layers.len();
        process.layers.retain(|o| stackup.find(&o.layer).is_some());
        let dropped = before - process.layers.len();
        if dropped > 0 {
            notes.push(format!(
                "{dropped} layer-specific process limit{} dropped with {}",
                if dropped == 1 { "" } else { "s" },
                if dropped == 1 {
                    "its layer"
                } else {
                    "their layers"
                }
            ));
        }
    }
    p.stackup = stackup;
    if p.fab.target_thickness_m.is_none() {
        p.fab.target_thickness_m = Some(STARTER_BOARD_M);
    }
    Some((p, notes))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_starter_is_a_valid_balanced_1_6_mm_board() {
        for n in STARTER_COPPER_COUNTS {
            let s = stack(n, None).unwrap();
            s.validate().unwrap();
            assert_eq!(s.copper_count(), n);
            assert!(s.is_symmetric(), "{n} layers");
            // Cores are rounded to 10 µm, so the board is within half of that per core of 1.6 mm (arithmetic).
            let off = (s.total_thickness_m() - STARTER_BOARD_M).abs();
            assert!(off <= 5e-6 * (n as f64 - 2.0) / 2.0 + 1e-12, "{n}: {off}");
            // Cores a fabricator stocks: 75 µm to 1.2 mm (common practice, no source).
            for l in &s.layers {
                if let Layer::Core(d) = l {
                    assert!((75e-6..=1.2e-3).contains(&d.thickness_m), "{n}: {d:?}");
                }
            }
            // Every signal layer has a plane next to it in the copper order.
            let c: Vec<&Copper> = s.layers.iter().filter_map(Layer::copper).collect();
            for (i, x) in c.iter().enumerate() {
                let near = [i.checked_sub(1), Some(i + 1)]
                    .into_iter()
                    .flatten()
                    .filter_map(|j| c.get(j))
                    .any(|y| y.role == CopperRole::Plane);
                assert!(x.role == CopperRole::Plane || near, "{n}: {}", x.name);
            }
        }
        assert!(stack(5, None).is_none() && stack(14, None).is_none());
    }

    #[test]
    fn names_follow_position() {
        let s = stack(8, None).unwrap();
        let names: Vec<&str> = s.layers.iter().map(Layer::name).collect();
        assert_eq!(names[1], "L1 Top");
        assert_eq!(names[2], "Prepreg L1–L2");
        assert_eq!(names[4], "Core L2–L3");
        assert_eq!(names[names.len() - 2], "L8 Bottom");
        assert_eq!(copper_tag("L12 GND"), "L12");
        assert_eq!(copper_tag("Layer 3"), "Layer 3");
        assert_eq!(
            dielectric_name("Prepreg", None, Some("L1 Top")),
            "Prepreg over L1"
        );
    }

    #[test]
    fn a_starter_keeps_the_rules_valid_and_says_what_moved() {
        // The demo's six layers onto eight: rules on names the new stack lacks move by position and say so.
        let demo = crate::design::demo::project();
        let (p, notes) = apply(&demo, 8).unwrap();
        p.validate().unwrap();
        assert_eq!(p.rules.len(), demo.rules.len());
        assert_eq!(p.fab.target_thickness_m, Some(STARTER_BOARD_M));
        for r in &p.rules {
            let c = p.stackup.layers[p.stackup.find(&r.layer).unwrap()]
                .copper()
                .unwrap();
            assert_eq!(c.role, CopperRole::Signal, "{}", r.name);
        }
        assert!(
            !notes.is_empty() && notes[0].contains("moved from"),
            "{notes:?}"
        );
        // A project without rules gets the starter's: 50 Ω and 100 Ω on each of the four signal layers.
        let mut blank = demo.clone();
        blank.rules.clear();
        let (p, notes) = apply(&blank, 8).unwrap();
        p.validate().unwrap();
        assert_eq!(p.rules.len(), 8);
        assert!(notes[0].contains("4 signal layers"), "{notes:?}");
        // A target already set is the user's and stays.
        blank.fab.target_thickness_m = Some(1.0e-3);
        assert_eq!(
            apply(&blank, 4).unwrap().0.fab.target_thickness_m,
            Some(1.0e-3)
        );
        // Outer plating stays valid: the outer layers carry it on their base foil.
        blank.fab.outer_plating_m = Some(50e-6);
        apply(&blank, 6).unwrap().0.validate().unwrap();
    }
}
