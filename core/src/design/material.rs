//! Generic dielectric material classes with typical Dk/Df at 1 GHz, shared by the CLI and the web app as starting
//! points. Pure data. The values are typical of each class (common practice, no source; from memory of laminate
//! datasheet ranges): a real design must use the chosen laminate's own datasheet values, which the user can edit.

/// Which layers a preset suits.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PresetUse {
    /// Cores and prepregs.
    Laminate,
    /// Solder mask.
    Mask,
}

/// One generic material class.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MaterialPreset {
    /// Stable identifier for menus and files.
    pub id: &'static str,
    /// Plain class name, used as the layer's material text.
    pub name: &'static str,
    /// Typical relative permittivity at `spec_freq_hz`.
    pub dk: f64,
    /// Typical loss tangent at `spec_freq_hz`.
    pub df: f64,
    pub spec_freq_hz: f64,
    pub used_for: PresetUse,
}

/// The caption every display of the presets carries.
pub const PRESET_CAVEAT: &str = "typical values, common practice — use your laminate's datasheet";

const GHZ: f64 = 1e9;

/// The generic classes, ordered from lossy to low-loss, then solder mask.
/// Typical 1 GHz values (common practice, no source): standard FR-4 Dk 4.2–4.6 / Df 0.015–0.022; high-Tg FR-4
/// similar Dk with slightly lower Df; "mid-loss" epoxy blends Df ≈ 0.008–0.012; "low-loss" Df ≈ 0.003–0.006;
/// PTFE with ceramic filler Dk ≈ 2.9–3.5 / Df ≈ 0.001–0.002; polyimide film Dk ≈ 3.2–3.5 / Df ≈ 0.003–0.008;
/// liquid photo-imageable solder mask Dk ≈ 3.3–4.0 / Df ≈ 0.02–0.03.
pub const PRESETS: [MaterialPreset; 7] = [
    MaterialPreset {
        id: "fr4",
        name: "standard FR-4",
        dk: 4.3,
        df: 0.018,
        spec_freq_hz: GHZ,
        used_for: PresetUse::Laminate,
    },
    MaterialPreset {
        id: "fr4-high-tg",
        name: "high-Tg FR-4",
        dk: 4.4,
        df: 0.016,
        spec_freq_hz: GHZ,
        used_for: PresetUse::Laminate,
    },
    MaterialPreset {
        id: "mid-loss",
        name: "mid-loss epoxy laminate",
        dk: 3.9,
        df: 0.009,
        spec_freq_hz: GHZ,
        used_for: PresetUse::Laminate,
    },
    MaterialPreset {
        id: "low-loss",
        name: "low-loss laminate",
        dk: 3.6,
        df: 0.004,
        spec_freq_hz: GHZ,
        used_for: PresetUse::Laminate,
    },
    MaterialPreset {
        id: "ptfe-ceramic",
        name: "PTFE-ceramic laminate",
        dk: 3.0,
        df: 0.0013,
        spec_freq_hz: GHZ,
        used_for: PresetUse::Laminate,
    },
    MaterialPreset {
        id: "polyimide",
        name: "polyimide",
        dk: 3.4,
        df: 0.004,
        spec_freq_hz: GHZ,
        used_for: PresetUse::Laminate,
    },
    MaterialPreset {
        id: "lpi-mask",
        name: "liquid photo-imageable solder mask",
        dk: 3.7,
        df: 0.025,
        spec_freq_hz: GHZ,
        used_for: PresetUse::Mask,
    },
];

/// The preset with identifier `id`.
pub fn preset(id: &str) -> Option<&'static MaterialPreset> {
    PRESETS.iter().find(|p| p.id == id)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn presets_pass_the_stack_checks() {
        // Every preset must be a legal dielectric: Dk 1..100, Df 0..1, spec frequency 1 Hz..1 THz (error.rs bounds).
        for p in PRESETS {
            assert!(
                crate::base::error::permittivity("dk", p.dk).is_ok(),
                "{}",
                p.id
            );
            assert!(
                crate::base::error::in_range("df", p.df, 0.0, 1.0, "").is_ok(),
                "{}",
                p.id
            );
            assert!(p.spec_freq_hz >= 1.0 && p.spec_freq_hz <= 1e12);
        }
    }

    #[test]
    fn ids_are_unique_and_found() {
        for (i, p) in PRESETS.iter().enumerate() {
            assert!(PRESETS[..i].iter().all(|q| q.id != p.id));
            assert_eq!(preset(p.id), Some(p));
        }
        assert!(preset("nonexistent").is_none());
    }

    #[test]
    fn ptfe_is_lower_loss_than_fr4() {
        // Class ordering everyone agrees on (common practice, no source): PTFE-ceramic Df is an order below FR-4.
        let fr4 = preset("fr4").unwrap();
        let ptfe = preset("ptfe-ceramic").unwrap();
        assert!(ptfe.df * 5.0 < fr4.df && ptfe.dk < fr4.dk);
    }
}
