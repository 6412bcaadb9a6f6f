//! The embedded demo: an invented 6-layer board for a fictional harbour-buoy sensor gateway, with invented,
//! plausible FR-4-class materials. Not a real product and not a recommended stackup.

use crate::base::units::LengthUnit;
use crate::design::project::{Fab, ImpedanceRule, Project, Solve, Structure, SCHEMA_VERSION};
use crate::design::stackup::{Copper, CopperRole, Dielectric, Layer, Stackup};

fn copper(name: &str, um: f64, role: CopperRole) -> Layer {
    Layer::Copper(Copper {
        name: name.into(),
        thickness_m: um * 1e-6,
        role,
        fill_pct: None,
        roughness: None,
    })
}

fn dielectric(name: &str, material: &str, um: f64, dk: f64, df: f64) -> Dielectric {
    Dielectric {
        name: name.into(),
        material: material.into(),
        thickness_m: um * 1e-6,
        dk,
        df,
        spec_freq_hz: 1e9,
        construction: None,
    }
}

fn rule(
    name: &str,
    layer: &str,
    structure: Structure,
    target: f64,
    width_um: f64,
) -> ImpedanceRule {
    ImpedanceRule {
        name: name.into(),
        layer: layer.into(),
        structure,
        target_ohm: target,
        tolerance_pct: 10.0,
        solve: Solve::Width,
        model: Default::default(),
        width_m: width_um * 1e-6,
        spacing_m: None,
        gap_m: None,
        partner_layer: None,
        references: Vec::new(),
        link: None,
    }
}

/// The demo project.
pub fn project() -> Project {
    let layers = vec![
        Layer::SolderMask(dielectric(
            "Top mask",
            "LPI solder mask (generic)",
            20.0,
            3.8,
            0.020,
        )),
        copper("L1 Top", 35.0, CopperRole::Signal),
        Layer::Prepreg(dielectric(
            "PP1",
            "standard FR-4 prepreg",
            120.0,
            4.0,
            0.019,
        )),
        copper("L2 GND", 35.0, CopperRole::Plane),
        Layer::Core(dielectric(
            "Core 1",
            "standard FR-4 core",
            200.0,
            4.3,
            0.017,
        )),
        copper("L3 Inner", 17.5, CopperRole::Signal),
        Layer::Prepreg(dielectric(
            "PP2",
            "standard FR-4 prepreg",
            760.0,
            4.1,
            0.019,
        )),
        copper("L4 Inner", 17.5, CopperRole::Signal),
        Layer::Core(dielectric(
            "Core 2",
            "standard FR-4 core",
            200.0,
            4.3,
            0.017,
        )),
        copper("L5 PWR", 35.0, CopperRole::Plane),
        Layer::Prepreg(dielectric(
            "PP3",
            "standard FR-4 prepreg",
            120.0,
            4.0,
            0.019,
        )),
        copper("L6 Bottom", 35.0, CopperRole::Signal),
        Layer::SolderMask(dielectric(
            "Bottom mask",
            "LPI solder mask (generic)",
            20.0,
            3.8,
            0.020,
        )),
    ];
    let mut usb = rule("USB data 90 Ω", "L1 Top", Structure::EdgePair, 90.0, 150.0);
    usb.spacing_m = Some(150e-6);
    let mut eth = rule(
        "Ethernet 100 Ω",
        "L3 Inner",
        Structure::EdgePair,
        100.0,
        120.0,
    );
    eth.spacing_m = Some(180e-6);
    let mut rf = rule(
        "Radio feed 50 Ω",
        "L1 Top",
        Structure::Coplanar,
        50.0,
        250.0,
    );
    rf.gap_m = Some(145e-6);
    Project {
        routing: Default::default(),
        schema: SCHEMA_VERSION,
        title: "Buoy sensor gateway, 6 layers".into(),
        revision: "A".into(),
        units: LengthUnit::Um,
        analysis_freq_hz: 1e9,
        fab: Fab::default(),
        loss: Default::default(),
        process: None,
        stackup: Stackup { layers },
        rules: vec![
            rule(
                "Single-ended 50 Ω top",
                "L1 Top",
                Structure::Single,
                50.0,
                200.0,
            ),
            usb,
            eth,
            rule(
                "Single-ended 50 Ω inner",
                "L3 Inner",
                Structure::Single,
                50.0,
                120.0,
            ),
            rf,
        ],
    }
}
