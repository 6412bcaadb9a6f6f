//! The board's layer stack, top to bottom: copper layers with a role, dielectric cores and prepregs with their
//! Dk/Df at a stated frequency, and solder mask. Validation names the layer and field of any impossible value.

use crate::base::error::{self, Error, Result};
use crate::base::units::OZ_COPPER;
use crate::design::construction::LayerConstruction;
use serde::{Deserialize, Serialize};

/// What a copper layer carries.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CopperRole {
    /// Routed traces only.
    Signal,
    /// A solid reference plane (ground or power).
    Plane,
    /// Traces with poured reference areas; can serve as a reference when a rule names it.
    Mixed,
}

impl CopperRole {
    /// Typical copper fill share, % (common practice, no source): planes ~90 %, signal layers ~30 %.
    pub fn default_fill_pct(self) -> f64 {
        match self {
            CopperRole::Signal => 30.0,
            CopperRole::Plane => 90.0,
            CopperRole::Mixed => 60.0,
        }
    }
}

/// A copper layer.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Copper {
    pub name: String,
    /// Finished copper thickness, m (1 oz ≈ 34.8 µm).
    pub thickness_m: f64,
    pub role: CopperRole,
    /// Share of the layer's area covered by copper, %; `None` takes the role's default.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fill_pct: Option<f64>,
    /// Surface roughness of the foil for conductor loss; `None` is smooth copper.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub roughness: Option<crate::design::roughness::Roughness>,
}

impl Copper {
    pub fn fill_pct(&self) -> f64 {
        self.fill_pct
            .unwrap_or_else(|| self.role.default_fill_pct())
    }
    /// The copper weight in oz/ft² that this thickness corresponds to.
    pub fn weight_oz(&self) -> f64 {
        self.thickness_m / OZ_COPPER
    }
}

/// A dielectric layer: core, prepreg or solder mask.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Dielectric {
    pub name: String,
    /// Free-text material name (generic class or the laminate's datasheet name).
    #[serde(default)]
    pub material: String,
    /// Thickness, m. For prepreg this is the as-bought (unpressed) thickness.
    pub thickness_m: f64,
    /// Relative permittivity at `spec_freq_hz`.
    pub dk: f64,
    /// Loss tangent at `spec_freq_hz`.
    pub df: f64,
    /// The frequency Dk and Df are specified at, Hz.
    #[serde(default = "one_ghz")]
    pub spec_freq_hz: f64,
    /// How a core or prepreg is built (glass style, plies, resin content); when given, the thickness, Dk and Df
    /// above follow from it ([`Stackup::apply_constructions`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub construction: Option<LayerConstruction>,
}

impl Dielectric {
    /// Sets thickness, Dk and Df to what the layer's construction gives (nothing without one). Errors name the
    /// construction's field.
    pub fn apply_construction(&mut self) -> Result<()> {
        if let Some(c) = &self.construction {
            let laminate = c.construction()?.laminate()?;
            self.thickness_m = laminate.thickness_m;
            self.dk = laminate.dk;
            self.df = laminate.df;
        }
        Ok(())
    }
}

fn one_ghz() -> f64 {
    1e9
}

/// One layer of the stack.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "type", rename_all = "snake_case")]
pub enum Layer {
    Copper(Copper),
    Core(Dielectric),
    Prepreg(Dielectric),
    SolderMask(Dielectric),
}

impl Layer {
    pub fn name(&self) -> &str {
        match self {
            Layer::Copper(c) => &c.name,
            Layer::Core(d) | Layer::Prepreg(d) | Layer::SolderMask(d) => &d.name,
        }
    }
    pub fn thickness_m(&self) -> f64 {
        match self {
            Layer::Copper(c) => c.thickness_m,
            Layer::Core(d) | Layer::Prepreg(d) | Layer::SolderMask(d) => d.thickness_m,
        }
    }
    pub fn dielectric(&self) -> Option<&Dielectric> {
        match self {
            Layer::Copper(_) => None,
            Layer::Core(d) | Layer::Prepreg(d) | Layer::SolderMask(d) => Some(d),
        }
    }
    pub fn copper(&self) -> Option<&Copper> {
        match self {
            Layer::Copper(c) => Some(c),
            _ => None,
        }
    }
    /// A plain word for the layer type, as shown in tables.
    pub fn kind_name(&self) -> &'static str {
        match self {
            Layer::Copper(_) => "copper",
            Layer::Core(_) => "core",
            Layer::Prepreg(_) => "prepreg",
            Layer::SolderMask(_) => "solder mask",
        }
    }
}

/// The ordered layer stack, top to bottom.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
#[serde(transparent)]
pub struct Stackup {
    pub layers: Vec<Layer>,
}

/// The most layers a stack may have (a sanity cap for untrusted input).
pub const MAX_LAYERS: usize = 200;

impl Stackup {
    /// Checks every layer; errors name the layer (`layers[3] "L2 GND".dk`).
    pub fn validate(&self) -> Result<()> {
        if self.layers.is_empty() {
            return Err(Error::Invalid {
                field: "layers".into(),
                reason: "the stack has no layers".into(),
            });
        }
        if self.layers.len() > MAX_LAYERS {
            return Err(Error::Invalid {
                field: "layers".into(),
                reason: format!(
                    "{} layers is more than the {MAX_LAYERS} allowed",
                    self.layers.len()
                ),
            });
        }
        for (i, layer) in self.layers.iter().enumerate() {
            let at = |f: &str| format!("layers[{i}] {:?}.{f}", layer.name());
            if layer.name().trim().is_empty() {
                return Err(Error::Invalid {
                    field: format!("layers[{i}].name"),
                    reason: "must not be empty".into(),
                });
            }
            if layer.name().chars().count() > 80 {
                return Err(Error::Invalid {
                    field: at("name"),
                    reason: "longer than 80 characters".into(),
                });
            }
            if let Some(j) = self.layers[..i]
                .iter()
                .position(|l| l.name() == layer.name())
            {
                return Err(Error::Invalid {
                    field: at("name"),
                    reason: format!("the same name is already used by layers[{j}]"),
                });
            }
            match layer {
                Layer::Copper(c) => {
                    error::length_or_zero(&at("thickness"), c.thickness_m)?;
                    if let Some(fill) = c.fill_pct {
                        error::in_range(&at("fill"), fill, 0.0, 100.0, "%")?;
                    }
                    if let Some(r) = &c.roughness {
                        r.validate(&at("roughness"))?;
                    }
                }
                Layer::Core(d) | Layer::Prepreg(d) | Layer::SolderMask(d) => {
                    error::length(&at("thickness"), d.thickness_m)?;
                    error::permittivity(&at("dk"), d.dk)?;
                    error::in_range(&at("df"), d.df, 0.0, 1.0, "")?;
                    error::in_range(&at("spec_freq"), d.spec_freq_hz, 1.0, 1e12, "Hz")?;
                    if d.material.chars().count() > 120 {
                        return Err(Error::Invalid {
                            field: at("material"),
                            reason: "longer than 120 characters".into(),
                        });
                    }
                }
            }
        }
        Ok(())
    }

    /// Sets the thickness, Dk and Df of every core and prepreg that has a construction to what the construction
    /// gives, so every model downstream reads plain numbers. Errors name the layer and the construction's field.
    pub fn apply_constructions(&mut self) -> Result<()> {
        for (i, layer) in self.layers.iter_mut().enumerate() {
            let name = layer.name().to_string();
            match layer {
                Layer::Core(d) | Layer::Prepreg(d) => d
                    .apply_construction()
                    .map_err(|e| error::prefix(e, &format!("layers[{i}] {name:?}.construction")))?,
                Layer::SolderMask(d) if d.construction.is_some() => {
                    return Err(Error::Invalid {
                        field: format!("layers[{i}] {name:?}.construction"),
                        reason: "solder mask has no glass: give its thickness and Dk directly"
                            .into(),
                    });
                }
                _ => {}
            }
        }
        Ok(())
    }

    /// The outer copper layers: the first and the last copper of the stack (one when the stack has one copper).
    pub fn outer_coppers(&self) -> Vec<&Copper> {
        let coppers: Vec<&Copper> = self.layers.iter().filter_map(Layer::copper).collect();
        match coppers.as_slice() {
            [] => Vec::new(),
            [only] => vec![*only],
            [first, .., last] => vec![*first, *last],
        }
    }

    /// Index of the layer called `name`.
    pub fn find(&self, name: &str) -> Option<usize> {
        self.layers.iter().position(|l| l.name() == name)
    }

    /// The thickness a layer has in the finished board: prepreg flows into the gaps of the copper it touches, so its
    /// pressed thickness is the as-bought thickness less (1 − fill) × thickness of each adjacent copper layer
    /// (common practice, no source). Cores, copper and mask keep their thickness.
    pub fn pressed_thickness_m(&self, idx: usize) -> f64 {
        let layer = &self.layers[idx];
        let Layer::Prepreg(d) = layer else {
            return layer.thickness_m();
        };
        let mut loss = 0.0;
        for n in [idx.checked_sub(1), Some(idx + 1)].into_iter().flatten() {
            if let Some(Layer::Copper(c)) = self.layers.get(n) {
                loss += (1.0 - c.fill_pct() / 100.0) * c.thickness_m;
            }
        }
        // Never press below a tenth of the original: a thin prepreg between thick signal layers is a design error
        // the user should see as a warning, not a negative height.
        (d.thickness_m - loss).max(0.1 * d.thickness_m)
    }

    /// Finished board thickness, m (pressed prepregs).
    pub fn total_thickness_m(&self) -> f64 {
        (0..self.layers.len())
            .map(|i| self.pressed_thickness_m(i))
            .sum()
    }

    /// Number of copper layers.
    pub fn copper_count(&self) -> usize {
        self.layers
            .iter()
            .filter(|l| matches!(l, Layer::Copper(_)))
            .count()
    }

    /// True when the stack reads the same from both sides (type, thickness, Dk and copper within 1 %):
    /// an unbalanced stack tends to warp in reflow (common practice, no source).
    pub fn is_symmetric(&self) -> bool {
        let n = self.layers.len();
        (0..n / 2).all(|i| {
            let (a, b) = (&self.layers[i], &self.layers[n - 1 - i]);
            let close = |x: f64, y: f64| (x - y).abs() <= 0.01 * x.abs().max(y.abs());
            a.kind_name() == b.kind_name()
                && close(a.thickness_m(), b.thickness_m())
                && match (a.dielectric(), b.dielectric()) {
                    (Some(da), Some(db)) => close(da.dk, db.dk),
                    _ => true,
                }
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn prepreg_presses_into_sparse_copper() {
        let s = crate::design::demo::project().stackup;
        let i = s
            .layers
            .iter()
            .position(|l| matches!(l, Layer::Prepreg(_)))
            .unwrap();
        assert!(s.pressed_thickness_m(i) < s.layers[i].thickness_m());
    }

    #[test]
    fn duplicate_layer_names_are_rejected() {
        let mut s = crate::design::demo::project().stackup;
        let first = s.layers[0].clone();
        s.layers.push(first);
        let e = s.validate().unwrap_err().to_string();
        assert!(e.contains("already used"), "{e}");
    }

    #[test]
    fn a_construction_sets_its_layer_on_reading_and_a_bad_one_names_the_layer() {
        use crate::design::construction::{glass_style, LayerConstruction};
        use crate::design::project::Project;
        let mut p = crate::design::demo::project();
        let i = p
            .stackup
            .layers
            .iter()
            .position(|l| matches!(l, Layer::Prepreg(_)))
            .unwrap();
        let Layer::Prepreg(d) = &mut p.stackup.layers[i] else {
            unreachable!()
        };
        let (dk, df) = (d.dk, d.df);
        let mut c = LayerConstruction::typical(glass_style("2116").unwrap(), 2, dk, df);
        d.construction = Some(c.clone());
        // Read from a file, the layer takes the construction's thickness; at the style's usual resin the Dk
        // stays the datasheet's.
        let read = Project::from_json(&p.to_json()).unwrap();
        let laminate = c.construction().unwrap().laminate().unwrap();
        let got = read.stackup.layers[i].dielectric().unwrap();
        assert_eq!(got.thickness_m, laminate.thickness_m);
        assert!((got.dk - dk).abs() < 1e-12 && (got.df - df).abs() < 1e-12);
        // More resin: thicker and a lower Dk, as in a real laminate.
        c.resin_pct += 6.0;
        if let Layer::Prepreg(d) = &mut p.stackup.layers[i] {
            d.construction = Some(c.clone());
        }
        let richer = Project::from_json(&p.to_json()).unwrap();
        let r = richer.stackup.layers[i].dielectric().unwrap();
        assert!(r.thickness_m > got.thickness_m && r.dk < got.dk);
        c.glass = "9999".into();
        if let Layer::Prepreg(d) = &mut p.stackup.layers[i] {
            d.construction = Some(c);
        }
        let e = Project::from_json(&p.to_json()).unwrap_err().to_string();
        assert!(
            e.contains(&format!("layers[{i}]")) && e.contains("glass style"),
            "{e}"
        );
    }
}
