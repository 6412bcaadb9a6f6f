//! Touchstone 1.1 text (the open S-parameter file format) of a line segment: a 2-port for a single line, a 4-port
//! for a pair, from the per-length RLGC model of [`crate::line::loss`] through the ABCD matrix of a uniform line.
//! Pure string generation; writing the file is the CLI's job.
//!
//! ABCD of a uniform line of length ℓ (any microwave text, e.g. Pozar, "Microwave Engineering", Table 4.1):
//! A = D = cosh γℓ, B = Zc sinh γℓ, C = sinh(γℓ)/Zc; to S with reference Z at both ports (Pozar Table 4.2):
//! S11 = (A + B/Z − CZ − D)/Δ, S21 = 2/Δ, Δ = A + B/Z + CZ + D (S22 = S11, S12 = S21 for the symmetric line).
//! A symmetric pair with every port terminated in Z decouples into its odd and even modes, each terminated in Z:
//! S(near A → near B) = (S11e − S11o)/2, S(near A → far A) = (S21e + S21o)/2, and so on.
//!
//! Checked against: unitarity and the matched-line limit (unit tests), and scikit-rf reading the file back and its
//! own `DefinedGammaZ0` line from the same γ and Zc (`tests/python/test_loss.py`).

use crate::base::error::{self, Result};
use crate::line::loss::{LineModel, ModeLoss};
use num_complex::Complex64;

/// The S-matrix of a uniform line (`zc`, `gamma`) of length `len_m` between ports of impedance `z_ref`.
pub fn s_line(zc: Complex64, gamma: Complex64, len_m: f64, z_ref: f64) -> [[Complex64; 2]; 2] {
    let gl = gamma * len_m;
    let (a, b, c) = (gl.cosh(), zc * gl.sinh(), gl.sinh() / zc);
    let d = a;
    let z = Complex64::new(z_ref, 0.0);
    let delta = a + b / z + c * z + d;
    let s11 = (a + b / z - c * z - d) / delta;
    let s21 = Complex64::new(2.0, 0.0) / delta;
    [[s11, s21], [s21, s11]]
}

/// The 4-port S-matrix of a symmetric pair from its odd and even modes. Port order: 1 = line A near end,
/// 2 = line B near end, 3 = line A far end, 4 = line B far end.
pub fn s_pair(
    odd: (Complex64, Complex64),
    even: (Complex64, Complex64),
    len_m: f64,
    z_ref: f64,
) -> [[Complex64; 4]; 4] {
    let so = s_line(odd.0, odd.1, len_m, z_ref);
    let se = s_line(even.0, even.1, len_m, z_ref);
    let a = (se[0][0] + so[0][0]) / 2.0;
    let b = (se[0][0] - so[0][0]) / 2.0;
    let c = (se[1][0] + so[1][0]) / 2.0;
    let d = (se[1][0] - so[1][0]) / 2.0;
    [[a, b, c, d], [b, a, d, c], [c, d, a, b], [d, c, b, a]]
}

fn mode(m: &ModeLoss) -> (Complex64, Complex64) {
    (m.z0(), m.gamma())
}

fn pair_text(z: Complex64) -> String {
    format!(" {:.10e} {:.10e}", z.re, z.im)
}

/// Touchstone 1.1 text of a `length_m` segment of `model` at `freqs`, reference `z_ref` Ω at every port.
/// `title` goes into the first comment line. Returns `(text, number of ports)`.
pub fn segment(
    model: &LineModel,
    length_m: f64,
    z_ref: f64,
    freqs: &[f64],
    title: &str,
) -> Result<(String, usize)> {
    error::in_range("length", length_m, 1e-6, 10.0, "m")?;
    error::in_range("z_ref", z_ref, 1.0, 1000.0, "Ω")?;
    if freqs.is_empty() || freqs.len() > crate::line::loss::MAX_POINTS {
        return Err(error::Error::OutOfRange {
            field: "points".into(),
            value: freqs.len() as f64,
            min: 1.0,
            max: crate::line::loss::MAX_POINTS as f64,
            unit: "",
        });
    }
    let mut body = String::new();
    let mut ports = 2;
    for &f in freqs {
        let at = model.at(f)?;
        body.push_str(&format!("{f:.10e}"));
        if let (Some(o), Some(e)) = (&at.odd, &at.even) {
            ports = 4;
            let s = s_pair(mode(o), mode(e), length_m, z_ref);
            for (i, row) in s.iter().enumerate() {
                if i > 0 {
                    body.push_str(&" ".repeat(17));
                }
                for v in row {
                    body.push_str(&pair_text(*v));
                }
                body.push('\n');
            }
        } else if let Some(l) = &at.line {
            let s = s_line(l.z0(), l.gamma(), length_m, z_ref);
            // Two-port data are written N11 N21 N12 N22 (Touchstone 1.1 order).
            for v in [s[0][0], s[1][0], s[0][1], s[1][1]] {
                body.push_str(&pair_text(v));
            }
            body.push('\n');
        }
    }
    let title: String = title
        .chars()
        .filter(|c| !c.is_control())
        .take(200)
        .collect();
    let mut head = String::new();
    head.push_str(&format!("! {title}\n"));
    head.push_str(&format!(
        "! Ohmstack line segment, length {length_m:.6e} m, from the per-length RLGC model (design estimate)\n"
    ));
    if ports == 4 {
        head.push_str(
            "! Port order: 1 = line A near end, 2 = line B near end, 3 = line A far end, 4 = line B far end\n",
        );
    } else {
        head.push_str("! Port order: 1 = near end, 2 = far end\n");
    }
    head.push_str(&format!(
        "! Reference impedance {z_ref} ohm at every port; S-parameters as real/imaginary pairs\n"
    ));
    head.push_str(&format!("# Hz S RI R {z_ref}\n"));
    Ok((head + &body, ports))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn unitary_defect<const N: usize>(s: &[[Complex64; N]; N]) -> f64 {
        // max |(S^H S − I)_ij|
        let mut worst: f64 = 0.0;
        for i in 0..N {
            for j in 0..N {
                let sum: Complex64 = s.iter().map(|row| row[i].conj() * row[j]).sum();
                let expect = if i == j { 1.0 } else { 0.0 };
                worst = worst.max((sum - expect).norm());
            }
        }
        worst
    }

    #[test]
    fn lossless_line_is_unitary() {
        // Lossless: γ = jβ, real Zc ≠ Zref. Energy conservation (exact): S^H S = I.
        for &(zc, beta, len) in &[(50.0, 100.0, 0.1), (75.0, 31.4, 0.037), (20.0, 500.0, 0.2)] {
            let s = s_line(
                Complex64::new(zc, 0.0),
                Complex64::new(0.0, beta),
                len,
                50.0,
            );
            assert!(unitary_defect(&s) < 1e-12, "{zc} {beta}");
        }
        let s = s_pair(
            (Complex64::new(45.0, 0.0), Complex64::new(0.0, 120.0)),
            (Complex64::new(70.0, 0.0), Complex64::new(0.0, 110.0)),
            0.05,
            50.0,
        );
        assert!(unitary_defect(&s) < 1e-12);
    }

    #[test]
    fn matched_lossless_line_is_a_pure_delay() {
        let s = s_line(
            Complex64::new(50.0, 0.0),
            Complex64::new(0.0, 77.0),
            0.1,
            50.0,
        );
        assert!(s[0][0].norm() < 1e-14);
        assert!((s[1][0].norm() - 1.0).abs() < 1e-14);
        // Phase −βℓ (exact).
        assert!((s[1][0] - Complex64::from_polar(1.0, -7.7)).norm() < 1e-12);
    }

    #[test]
    fn uncoupled_pair_is_two_separate_lines_in_the_documented_port_order() {
        // Equal odd and even modes mean no coupling: 1 → 3 and 2 → 4 are the two lines, nothing crosses.
        let m = (Complex64::new(60.0, -0.5), Complex64::new(0.8, 95.0));
        let s4 = s_pair(m, m, 0.07, 50.0);
        let s2 = s_line(m.0, m.1, 0.07, 50.0);
        assert!((s4[2][0] - s2[1][0]).norm() < 1e-15 && (s4[3][1] - s2[1][0]).norm() < 1e-15);
        assert!((s4[0][0] - s2[0][0]).norm() < 1e-15);
        for (i, j) in [(1, 0), (3, 0), (2, 1), (0, 3)] {
            assert!(s4[i][j].norm() < 1e-15, "S{}{}", i + 1, j + 1);
        }
        // Reciprocity (exact for a passive line): S = Sᵀ.
        let c = s_pair(
            (Complex64::new(40.0, -0.3), Complex64::new(1.0, 120.0)),
            (Complex64::new(65.0, -0.2), Complex64::new(0.7, 112.0)),
            0.05,
            50.0,
        );
        for (i, row) in c.iter().enumerate() {
            for (j, v) in row.iter().enumerate() {
                assert!((v - c[j][i]).norm() < 1e-15);
            }
        }
    }

    #[test]
    fn segment_text_is_touchstone_one_point_one() {
        use crate::design::dielectric::{DielectricModel, Dispersive};
        use crate::line::loss::{LossInputs, Surfaces};
        use crate::section::{Cover, CrossSection, Medium};
        let cs = CrossSection {
            loss: Default::default(),
            layering: None,
            medium: Medium::Microstrip {
                h: 170e-6,
                er: 4.2,
                cover: Cover::Air,
            },
            t: 35e-6,
            references: vec![],
            warnings: vec![],
        };
        let inputs = LossInputs {
            conductivity_s_per_m: 5.8e7,
            surfaces: Surfaces::default(),
            dielectric: Dispersive::fit(DielectricModel::Wideband, 4.2, 0.02, 1e9).unwrap(),
            dispersion: true,
        };
        let dims = crate::section::Dims {
            w: 330e-6,
            s: None,
            gap: None,
        };
        let model = LineModel::new(
            &cs,
            crate::design::project::Structure::Single,
            &dims,
            inputs,
        )
        .unwrap();
        let freqs = [1e8, 1e9, 1e10];
        let (text, ports) = segment(&model, 0.1, 50.0, &freqs, "test\nline").unwrap();
        assert_eq!(ports, 2);
        let lines: Vec<&str> = text.lines().collect();
        assert!(lines.iter().all(|l| !l.contains("test\nline")));
        assert_eq!(lines.iter().filter(|l| l.starts_with('#')).count(), 1);
        assert!(lines.contains(&"# Hz S RI R 50"));
        let data: Vec<Vec<f64>> = lines
            .iter()
            .filter(|l| !l.starts_with(['!', '#']))
            .map(|l| l.split_whitespace().map(|v| v.parse().unwrap()).collect())
            .collect();
        assert_eq!(data.len(), 3);
        for (row, f) in data.iter().zip(freqs) {
            assert_eq!(row.len(), 9);
            assert_eq!(row[0], f);
            // Lossy line: |S21| < 1, and N21 = N12 (reciprocal).
            let s21 = (row[3] * row[3] + row[4] * row[4]).sqrt();
            assert!(s21 < 1.0 && s21 > 0.5, "{s21}");
            assert_eq!((row[3], row[4]), (row[5], row[6]));
        }
        let e = segment(&model, 0.0, 50.0, &freqs, "x").unwrap_err();
        assert!(e.to_string().starts_with("length"), "{e}");
        let e = segment(&model, 0.1, f64::NAN, &freqs, "x").unwrap_err();
        assert!(e.to_string().starts_with("z_ref"), "{e}");
    }

    #[test]
    fn quarter_wave_transformer() {
        // A λ/4 line of Zc between Zref ports: Zin = Zc²/Zref, so S11 = (Zc² − Z²)/(Zc² + Z²) (exact).
        let beta: f64 = 100.0;
        let len = std::f64::consts::PI / 2.0 / beta;
        let s = s_line(
            Complex64::new(70.0, 0.0),
            Complex64::new(0.0, beta),
            len,
            50.0,
        );
        let expect = (70.0f64.powi(2) / 50.0 - 50.0) / (70.0f64.powi(2) / 50.0 + 50.0);
        assert!((s[0][0] - expect).norm() < 1e-12, "{}", s[0][0]);
    }
}
