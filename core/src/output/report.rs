//! Fab notes: what a fabricator needs from a plan — the stack table, the impedance table and the general notes —
//! as a structured [`FabNotes`] value and as Markdown and CSV text. Pure: the caller decides where the text goes.
//!
//! Names come from the user and are untrusted: Markdown cells escape every character Markdown or HTML could
//! interpret (so `<script>` or `a|b` show literally when rendered), and CSV follows RFC 4180 (fields with a comma,
//! quote or line break are quoted, quotes doubled, lines end in CRLF).

use crate::base::units::{format_length, format_sig, LengthUnit};
use crate::design::project::Project;
use crate::plan::{Plan, RuleOutcome};
use serde::Serialize;

/// Board thickness tolerance used when the project sets none, ± % (common practice, no source).
pub const DEFAULT_THICKNESS_TOLERANCE_PCT: f64 = 10.0;

/// One row of the stack table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StackRow {
    pub layer: String,
    /// "copper", "core", "prepreg" or "solder mask".
    pub kind: String,
    /// The dielectric's material, or the copper layer's role ("signal", "plane", "mixed").
    pub material: String,
    /// As-bought thickness, m.
    pub thickness_m: f64,
    /// Thickness in the finished board, m (less than as-bought for prepreg).
    pub pressed_thickness_m: f64,
    pub dk: Option<f64>,
    pub df: Option<f64>,
    /// The frequency Dk and Df are specified at, Hz.
    pub spec_freq_hz: Option<f64>,
    /// Copper weight, oz/ft².
    pub copper_oz: Option<f64>,
}

/// One row of the impedance table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ImpedanceRow {
    pub net_class: String,
    pub layer: String,
    /// The structure as chosen, e.g. "edge-coupled pair".
    pub structure: String,
    /// The family it resolves to, e.g. "coated microstrip" (empty when the rule failed).
    pub family: String,
    pub references: Vec<String>,
    pub target_ohm: f64,
    pub tolerance_pct: f64,
    /// Width at the trace base, m (solved when the rule solves for width).
    pub width_m: f64,
    pub spacing_m: Option<f64>,
    pub coplanar_gap_m: Option<f64>,
    /// The computed controlled impedance, Ω (Z0, or Zdiff for pairs); `None` when the rule failed.
    pub impedance_ohm: Option<f64>,
    pub within_tolerance: Option<bool>,
    /// Why the rule could not be computed.
    pub error: Option<String>,
}

/// Everything in the fab notes.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FabNotes {
    pub title: String,
    pub revision: String,
    /// The unit lengths are shown in (values are stored in metres).
    pub units: LengthUnit,
    pub stack: Vec<StackRow>,
    pub impedance: Vec<ImpedanceRow>,
    pub total_thickness_m: f64,
    pub thickness_tolerance_pct: f64,
    /// General notes, one sentence each.
    pub notes: Vec<String>,
}

/// Builds the fab notes of `project` from its computed `plan`.
pub fn fab_notes(project: &Project, plan: &Plan) -> FabNotes {
    let stack = plan
        .layers
        .iter()
        .enumerate()
        .map(|(i, row)| {
            let spec_freq_hz = project
                .stackup
                .layers
                .get(i)
                .and_then(|l| l.dielectric())
                .map(|d| d.spec_freq_hz);
            StackRow {
                layer: row.name.clone(),
                kind: row.kind.to_string(),
                material: if row.material.is_empty() {
                    row.role.unwrap_or_default().to_string()
                } else {
                    row.material.clone()
                },
                thickness_m: row.thickness_m,
                pressed_thickness_m: row.pressed_thickness_m,
                dk: row.dk,
                df: row.df,
                spec_freq_hz,
                copper_oz: row.copper_oz,
            }
        })
        .collect();
    let impedance = plan
        .rules
        .iter()
        .zip(&project.rules)
        .map(|(outcome, rule)| match outcome {
            RuleOutcome::Ok(r) => ImpedanceRow {
                net_class: r.name.clone(),
                layer: r.layer.clone(),
                structure: r.structure.to_string(),
                family: r.family.to_string(),
                references: r.references.clone(),
                target_ohm: r.target_ohm,
                tolerance_pct: r.tolerance_pct,
                width_m: r.width_m,
                spacing_m: r.spacing_m,
                coplanar_gap_m: r.gap_m,
                impedance_ohm: Some(r.impedance_ohm),
                within_tolerance: Some(r.within_tolerance),
                error: None,
            },
            RuleOutcome::Error { message, .. } => ImpedanceRow {
                net_class: rule.name.clone(),
                layer: rule.layer.clone(),
                structure: rule.structure.label().to_string(),
                family: String::new(),
                references: rule.references.clone(),
                target_ohm: rule.target_ohm,
                tolerance_pct: rule.tolerance_pct,
                width_m: rule.width_m,
                spacing_m: rule.spacing_m,
                coplanar_gap_m: rule.gap_m,
                impedance_ohm: None,
                within_tolerance: None,
                error: Some(message.clone()),
            },
        })
        .collect();
    let tol = project
        .fab
        .thickness_tolerance_pct
        .unwrap_or(DEFAULT_THICKNESS_TOLERANCE_PCT);
    let unit = project.units;
    let mut notes = vec![
        "Impedance to be verified on test coupons by the fabricator; the fabricator may adjust trace width and \
         dielectric thickness to meet the impedance targets."
            .to_string(),
        format!(
            "Finished board thickness {} ± {} % (all layers of the stack table including solder mask, prepreg as pressed).",
            format_length(plan.total_thickness_m, unit),
            format_sig(tol, 3)
        ),
        "Trace widths are at the trace base; spacings and gaps are edge to edge.".to_string(),
    ];
    if let Some(ef) = project.fab.etch_factor {
        notes.push(format!(
            "Etch factor {} assumed (trace top narrower than the base by 2 × thickness / etch factor).",
            format_sig(ef, 3)
        ));
    }
    if !plan.symmetric {
        notes.push(
            "The stack is not symmetric about its centre: check for warpage risk.".to_string(),
        );
    }
    notes.extend([
        "Design estimates only, from closed-form models; not a substitute for the fabricator's field-solved \
         stackup."
            .to_string(),
        "Spacing here is for impedance only: it is not an electrical-safety clearance or creepage distance."
            .to_string(),
        "Defer to local codes, applicable standards and licensed engineering practice.".to_string(),
    ]);
    FabNotes {
        title: project.title.clone(),
        revision: project.revision.clone(),
        units: unit,
        stack,
        impedance,
        total_thickness_m: plan.total_thickness_m,
        thickness_tolerance_pct: tol,
        notes,
    }
}

/// Escapes text for a Markdown table cell: a backslash before each ASCII punctuation character that CommonMark,
/// GitHub tables or inline HTML could give a meaning to anywhere in a line (CommonMark 0.31 §2.4 allows a
/// backslash escape before any ASCII punctuation): emphasis, code, links, raw HTML, entities, strike-through,
/// math and the cell separator `|`. Parentheses and `!` need none once `[` and `]` are escaped. Line breaks
/// become spaces (a cell is one line).
pub fn markdown_escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + 8);
    for c in text.chars() {
        match c {
            '\\' | '`' | '*' | '_' | '[' | ']' | '<' | '>' | '|' | '&' | '~' | '$' => {
                out.push('\\');
                out.push(c);
            }
            '\r' | '\n' | '\t' => out.push(' '),
            c if c.is_control() => out.push(' '),
            c => out.push(c),
        }
    }
    out
}

/// Quotes a CSV field when it needs it (RFC 4180 §2.6–2.7): fields holding a comma, a double quote, CR or LF
/// are enclosed in double quotes with inner quotes doubled. Leading/trailing spaces are kept as data.
pub fn csv_field(text: &str) -> String {
    if text.contains([',', '"', '\r', '\n']) || text.starts_with(' ') || text.ends_with(' ') {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

fn csv_line(fields: &[String]) -> String {
    let mut line = fields
        .iter()
        .map(|f| csv_field(f))
        .collect::<Vec<_>>()
        .join(",");
    line.push_str("\r\n");
    line
}

fn opt_num(v: Option<f64>) -> String {
    v.map(|x| format!("{x}")).unwrap_or_default()
}

fn md_row(cells: &[String]) -> String {
    let mut s = String::from("|");
    for c in cells {
        s.push(' ');
        s.push_str(c);
        s.push_str(" |");
    }
    s.push('\n');
    s
}

impl FabNotes {
    fn len(&self, m: f64) -> String {
        format_length(m, self.units)
    }

    /// The notes as a Markdown document (GitHub-flavoured tables).
    pub fn to_markdown(&self) -> String {
        let e = markdown_escape;
        let mut s = format!("# Fab notes: {}\n\n", e(&self.title));
        if !self.revision.is_empty() {
            s.push_str(&format!("Revision: {}\n\n", e(&self.revision)));
        }
        s.push_str("## Stack\n\n");
        let head = [
            "Layer",
            "Type",
            "Material",
            "Thickness (as bought)",
            "Thickness (pressed)",
            "Dk @ f",
            "Df @ f",
            "Copper",
        ];
        s.push_str(&md_row(&head.map(String::from)));
        s.push_str(&md_row(&head.map(|_| "---".to_string())));
        for r in &self.stack {
            let at = r
                .spec_freq_hz
                .map(|f| format!(" @ {} GHz", format_sig(f / 1e9, 4)))
                .unwrap_or_default();
            s.push_str(&md_row(&[
                e(&r.layer),
                e(&r.kind),
                e(&r.material),
                self.len(r.thickness_m),
                self.len(r.pressed_thickness_m),
                r.dk.map(|v| format!("{}{at}", format_sig(v, 4)))
                    .unwrap_or_default(),
                r.df.map(|v| format!("{}{at}", format_sig(v, 4)))
                    .unwrap_or_default(),
                r.copper_oz
                    .map(|oz| format!("{} oz", format_sig(oz, 2)))
                    .unwrap_or_default(),
            ]));
        }
        s.push_str(&format!(
            "\nTotal thickness: {} ± {} %\n\n## Controlled impedance\n\n",
            self.len(self.total_thickness_m),
            format_sig(self.thickness_tolerance_pct, 3)
        ));
        let head = [
            "Net class",
            "Layer",
            "Structure",
            "Reference planes",
            "Target",
            "Trace width",
            "Spacing",
            "Coplanar gap",
            "Computed Z",
            "Status",
        ];
        s.push_str(&md_row(&head.map(String::from)));
        s.push_str(&md_row(&head.map(|_| "---".to_string())));
        for r in &self.impedance {
            let structure = if r.family.is_empty() {
                r.structure.clone()
            } else {
                format!("{} ({})", r.structure, r.family)
            };
            let status = match (&r.error, r.within_tolerance) {
                (Some(err), _) => format!("error: {err}"),
                (None, Some(true)) => "ok".into(),
                (None, _) => "out of tolerance".into(),
            };
            s.push_str(&md_row(&[
                e(&r.net_class),
                e(&r.layer),
                e(&structure),
                e(&r.references.join(", ")),
                format!(
                    "{} Ω ± {} %",
                    format_sig(r.target_ohm, 4),
                    format_sig(r.tolerance_pct, 3)
                ),
                self.len(r.width_m),
                r.spacing_m.map(|v| self.len(v)).unwrap_or_default(),
                r.coplanar_gap_m.map(|v| self.len(v)).unwrap_or_default(),
                r.impedance_ohm
                    .map(|z| format!("{z:.2} Ω"))
                    .unwrap_or_default(),
                e(&status),
            ]));
        }
        s.push_str("\n## Notes\n\n");
        for (i, n) in self.notes.iter().enumerate() {
            s.push_str(&format!("{}. {}\n", i + 1, e(n)));
        }
        s
    }

    /// The notes as CSV (RFC 4180, CRLF line ends): three tables — stack, impedance, notes — each with its own
    /// header row, separated by an empty line. Lengths are plain numbers in the project's display unit (named in
    /// the header), at full precision so the values read back exactly enough to compare.
    pub fn to_csv(&self) -> String {
        let u = self.units.symbol();
        let mut s = String::new();
        s.push_str(&csv_line(&[
            "layer".into(),
            "type".into(),
            "material".into(),
            format!("thickness ({u})"),
            format!("pressed thickness ({u})"),
            "dk".into(),
            "df".into(),
            "spec frequency (Hz)".into(),
            "copper (oz)".into(),
        ]));
        for r in &self.stack {
            s.push_str(&csv_line(&[
                r.layer.clone(),
                r.kind.clone(),
                r.material.clone(),
                format!("{}", self.units.from_m(r.thickness_m)),
                format!("{}", self.units.from_m(r.pressed_thickness_m)),
                opt_num(r.dk),
                opt_num(r.df),
                opt_num(r.spec_freq_hz),
                opt_num(r.copper_oz),
            ]));
        }
        s.push_str("\r\n");
        s.push_str(&csv_line(&[
            "net class".into(),
            "layer".into(),
            "structure".into(),
            "family".into(),
            "reference planes".into(),
            "target (ohm)".into(),
            "tolerance (%)".into(),
            format!("trace width ({u})"),
            format!("spacing ({u})"),
            format!("coplanar gap ({u})"),
            "computed z (ohm)".into(),
            "status".into(),
        ]));
        for r in &self.impedance {
            let status = match (&r.error, r.within_tolerance) {
                (Some(err), _) => format!("error: {err}"),
                (None, Some(true)) => "ok".into(),
                (None, _) => "out of tolerance".into(),
            };
            s.push_str(&csv_line(&[
                r.net_class.clone(),
                r.layer.clone(),
                r.structure.clone(),
                r.family.clone(),
                r.references.join("; "),
                format!("{}", r.target_ohm),
                format!("{}", r.tolerance_pct),
                format!("{}", self.units.from_m(r.width_m)),
                opt_num(r.spacing_m.map(|v| self.units.from_m(v))),
                opt_num(r.coplanar_gap_m.map(|v| self.units.from_m(v))),
                opt_num(r.impedance_ohm),
                status,
            ]));
        }
        s.push_str("\r\n");
        s.push_str(&csv_line(&["note".into()]));
        for n in &self.notes {
            s.push_str(&csv_line(std::slice::from_ref(n)));
        }
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::design::stackup::Layer;

    fn hostile() -> Project {
        let mut p = crate::design::demo::project();
        p.title = "<script>alert(1)</script> | a,b \"q\"".into();
        if let Layer::Prepreg(d) = &mut p.stackup.layers[2] {
            d.name = "a|b,\"c\"".into();
            d.material = "<script>x</script>\nsecond line".into();
        }
        p.rules[0].name = "=cmd|' /C calc'!A0".into();
        p
    }

    /// A small RFC 4180 reader written from the RFC's grammar (§2), independent of the writer above.
    fn parse_csv(text: &str) -> Vec<Vec<String>> {
        let mut rows = Vec::new();
        let mut row = Vec::new();
        let mut field = String::new();
        let mut chars = text.chars().peekable();
        let mut quoted = false;
        while let Some(c) = chars.next() {
            if quoted {
                if c == '"' {
                    if chars.peek() == Some(&'"') {
                        field.push('"');
                        chars.next();
                    } else {
                        quoted = false;
                    }
                } else {
                    field.push(c);
                }
            } else {
                match c {
                    '"' => quoted = true,
                    ',' => row.push(std::mem::take(&mut field)),
                    '\r' => {
                        assert_eq!(chars.next(), Some('\n'), "CR without LF");
                        row.push(std::mem::take(&mut field));
                        rows.push(std::mem::take(&mut row));
                    }
                    '\n' => panic!("bare LF outside quotes"),
                    c => field.push(c),
                }
            }
        }
        assert!(
            !quoted && field.is_empty() && row.is_empty(),
            "unterminated"
        );
        rows
    }

    #[test]
    fn demo_notes_carry_every_layer_and_rule() {
        let p = crate::design::demo::project();
        let plan = crate::plan(&p).unwrap();
        let n = fab_notes(&p, &plan);
        assert_eq!(n.stack.len(), p.stackup.layers.len());
        assert_eq!(n.impedance.len(), p.rules.len());
        assert_eq!(n.thickness_tolerance_pct, 10.0);
        let md = n.to_markdown();
        assert!(md.contains("verified on test coupons"), "{md}");
        assert!(
            md.contains("not an electrical\\-safety clearance") || md.contains("electrical-safety")
        );
        assert!(md.contains("Defer to local codes"));
        // The first demo rule solves to exactly 50 Ω.
        assert!(md.contains("50.00 Ω"), "{md}");
    }

    #[test]
    fn failed_rules_show_their_error() {
        let p = crate::design::demo::project();
        let plan = crate::plan(&p).unwrap();
        let n = fab_notes(&p, &plan);
        for (row, outcome) in n.impedance.iter().zip(&plan.rules) {
            if let RuleOutcome::Error { message, .. } = outcome {
                assert_eq!(row.error.as_deref(), Some(message.as_str()));
                assert!(n.to_csv().contains(&format!("error: {message}")));
            }
        }
    }

    #[test]
    fn markdown_escapes_pipes_and_html() {
        let p = hostile();
        let plan = crate::plan(&p).unwrap();
        let md = fab_notes(&p, &plan).to_markdown();
        assert!(!md.contains("<script>"), "{md}");
        assert!(md.contains("\\<script\\>"), "{md}");
        assert!(md.contains("a\\|b,\"c\""), "{md}");
        // Every table row has the same number of unescaped pipes as its header.
        for table in md.split("\n\n").filter(|t| t.starts_with('|')) {
            let counts: Vec<usize> = table
                .lines()
                .map(|l| {
                    l.replace("\\\\", "")
                        .replace("\\|", "")
                        .matches('|')
                        .count()
                })
                .collect();
            assert!(counts.iter().all(|&c| c == counts[0]), "{table}");
        }
        // No raw line break inside a cell.
        assert!(md.lines().all(|l| !l.starts_with("second line")));
    }

    #[test]
    fn csv_round_trips_hostile_text() {
        let p = hostile();
        let plan = crate::plan(&p).unwrap();
        let notes = fab_notes(&p, &plan);
        let rows = parse_csv(&notes.to_csv());
        let pp = rows
            .iter()
            .find(|r| r[0] == "a|b,\"c\"")
            .expect("layer row");
        assert_eq!(pp[2], "<script>x</script>\nsecond line");
        assert!(rows.iter().any(|r| r[0] == "=cmd|' /C calc'!A0"));
        // Numbers read back to the stored metres (display unit µm).
        let t: f64 = pp[3].parse().unwrap();
        assert!((t * 1e-6 - 120e-6).abs() < 1e-15);
    }

    #[test]
    fn csv_quoting_follows_rfc_4180() {
        assert_eq!(csv_field("plain"), "plain");
        assert_eq!(csv_field("a,b"), "\"a,b\"");
        assert_eq!(csv_field("say \"hi\""), "\"say \"\"hi\"\"\"");
        assert_eq!(csv_field("two\nlines"), "\"two\nlines\"");
        assert_eq!(csv_field(""), "");
    }

    #[test]
    fn thickness_tolerance_can_be_set() {
        let mut p = crate::design::demo::project();
        p.fab.thickness_tolerance_pct = Some(8.0);
        let plan = crate::plan(&p).unwrap();
        let md = fab_notes(&p, &plan).to_markdown();
        assert!(md.contains("± 8 %"), "{md}");
        p.fab.thickness_tolerance_pct = Some(-1.0);
        assert!(p.validate().is_err());
    }
}
