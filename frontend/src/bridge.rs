//! The only file that calls the core's physics: turns the edited project into the plan the panels render.

use ohmstack_core::{plan, Plan, Project};

/// Plans the project; an invalid project becomes its error message (shown in place of results).
pub fn analyse(project: &Project) -> Result<Plan, String> {
    project.validate().map_err(|e| e.to_string())?;
    plan(project).map_err(|e| e.to_string())
}

// ---- Share links, fab notes, drawings and plots (panels/share.rs, notes.rs, pictures.rs) ----

use ohmstack_core::models::Dims;
use ohmstack_core::plot::{self, LinePlot, Series};
use ohmstack_core::report::{self, FabNotes};
use ohmstack_core::spread::{self, ImpedanceModel, SampleModel, SpreadOptions};
use ohmstack_core::units::{format_length, format_sig, parse_length};
use ohmstack_core::{draw, loss, touchstone, ImpedanceRule, RuleResult};

/// The share-link fragment (`v1.…`, no `#`) of `project`.
pub fn encode_link(project: &Project) -> String {
    ohmstack_core::share::encode(project)
}

/// Reads a share link (untrusted); the error is the core's `ShareError` text.
pub fn decode_link(link: &str) -> Result<Project, String> {
    ohmstack_core::share::decode(link).map_err(|e| e.to_string())
}

/// Reads a saved project (untrusted: validated like a file).
pub fn project_from_json(text: &str) -> Result<Project, String> {
    Project::from_json(text).map_err(|e| e.to_string())
}

/// The project as the JSON the CLI and local storage read.
pub fn project_to_json(project: &Project) -> String {
    project.to_json()
}

/// The fab notes as table cells ready to show as text, plus the downloadable Markdown and CSV.
#[derive(Debug, Clone, PartialEq)]
pub struct NotesView {
    pub title: String,
    pub revision: String,
    pub stack_head: Vec<&'static str>,
    pub stack: Vec<Vec<String>>,
    pub total: String,
    pub impedance_head: Vec<&'static str>,
    /// Cells of each impedance row, and whether the row failed or is out of tolerance.
    pub impedance: Vec<(Vec<String>, bool)>,
    pub notes: Vec<String>,
    pub markdown: String,
    pub csv: String,
}

/// Builds the fab-notes view; the cells carry the same text as the Markdown notes (unescaped: shown as text).
pub fn notes_view(project: &Project, plan: &Plan) -> NotesView {
    let notes: FabNotes = report::fab_notes(project, plan);
    let unit = notes.units;
    let len = |m: f64| format_length(m, unit);
    let stack = notes
        .stack
        .iter()
        .map(|r| {
            let at = r
                .spec_freq_hz
                .map(|f| format!(" @ {} GHz", format_sig(f / 1e9, 4)))
                .unwrap_or_default();
            vec![
                r.layer.clone(),
                r.kind.clone(),
                r.material.clone(),
                len(r.thickness_m),
                len(r.pressed_thickness_m),
                r.dk.map(|v| format!("{}{at}", format_sig(v, 4)))
                    .unwrap_or_default(),
                r.df.map(|v| format!("{}{at}", format_sig(v, 4)))
                    .unwrap_or_default(),
                r.copper_oz
                    .map(|oz| format!("{} oz", format_sig(oz, 2)))
                    .unwrap_or_default(),
            ]
        })
        .collect();
    let impedance = notes
        .impedance
        .iter()
        .map(|r| {
            let structure = if r.family.is_empty() {
                r.structure.clone()
            } else {
                format!("{} ({})", r.structure, r.family)
            };
            let (status, bad) = match (&r.error, r.within_tolerance) {
                (Some(err), _) => (format!("error: {err}"), true),
                (None, Some(true)) => ("ok".to_string(), false),
                (None, _) => ("out of tolerance".to_string(), true),
            };
            let cells = vec![
                r.net_class.clone(),
                r.layer.clone(),
                structure,
                r.references.join(", "),
                format!(
                    "{} Ω ± {} %",
                    format_sig(r.target_ohm, 4),
                    format_sig(r.tolerance_pct, 3)
                ),
                len(r.width_m),
                r.spacing_m.map(len).unwrap_or_default(),
                r.coplanar_gap_m.map(len).unwrap_or_default(),
                r.impedance_ohm
                    .map(|z| format!("{z:.2} Ω"))
                    .unwrap_or_default(),
                status,
            ];
            (cells, bad)
        })
        .collect();
    NotesView {
        title: notes.title.clone(),
        revision: notes.revision.clone(),
        stack_head: vec![
            "Layer",
            "Type",
            "Material",
            "Thickness (as bought)",
            "Thickness (pressed)",
            "Dk @ f",
            "Df @ f",
            "Copper",
        ],
        stack,
        total: format!(
            "{} ± {} %",
            len(notes.total_thickness_m),
            format_sig(notes.thickness_tolerance_pct, 3)
        ),
        impedance_head: vec![
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
        ],
        impedance,
        notes: notes.notes.clone(),
        markdown: notes.to_markdown(),
        csv: notes.to_csv(),
    }
}

/// The SVG cross-section of the stack with the traces of rule `rule_idx` (core escapes all user text).
pub fn cross_section_svg(project: &Project, rule_idx: Option<usize>) -> Result<String, String> {
    draw::cross_section_svg(project, rule_idx).map_err(|e| e.to_string())
}

/// The rule at `idx`, solved, with its loss model.
fn solved_rule(
    project: &Project,
    idx: usize,
) -> Result<(&ImpedanceRule, RuleResult, loss::LineModel), String> {
    let rule = project
        .rules
        .get(idx)
        .ok_or_else(|| format!("rule {idx} does not exist"))?;
    let r = ohmstack_core::plan::analyze_rule(project, rule).map_err(|e| e.to_string())?;
    let dims = Dims {
        w: r.width_m,
        s: r.spacing_m,
        gap: r.gap_m,
    };
    let model =
        loss::for_rule(project, rule, &r.cross_section, &dims).map_err(|e| e.to_string())?;
    Ok((rule, r, model))
}

/// Loss (dB/in) of the signal mode against frequency over the default sweep: total, conductor, dielectric.
pub fn loss_plot_svg(project: &Project, idx: usize) -> Result<String, String> {
    let (rule, _, model) = solved_rule(project, idx)?;
    let points = model
        .sweep(&loss::Sweep::default())
        .map_err(|e| e.to_string())?;
    let pick = |f: fn(&loss::ModeLoss) -> f64| -> Vec<(f64, f64)> {
        points
            .iter()
            .filter_map(|p| p.signal().map(|m| (p.freq_hz / 1e9, f(m))))
            .collect()
    };
    let mode = if rule.structure.is_pair() {
        "odd mode, per line"
    } else {
        "single line"
    };
    Ok(plot::line_plot(&LinePlot {
        title: format!("Loss of {} ({mode})", rule.name),
        x_label: "frequency (GHz)".into(),
        y_label: "loss (dB/in)".into(),
        series: vec![
            Series {
                label: "total".into(),
                points: pick(|m| m.total.db_per_in),
            },
            Series {
                label: "conductor".into(),
                points: pick(|m| m.conductor.db_per_in),
            },
            Series {
                label: "dielectric".into(),
                points: pick(|m| m.dielectric.db_per_in),
            },
        ],
        log_x: true,
    }))
}

/// Impedance against trace width (±30 % around the solution) with the target, its tolerance band and the
/// solved width marked.
pub fn z_width_plot_svg(project: &Project, idx: usize) -> Result<String, String> {
    let (rule, r, _) = solved_rule(project, idx)?;
    let pts = plot::z_vs_width(project, idx, 61).map_err(|e| e.to_string())?;
    let unit = project.units;
    let x = |w: f64| unit.from_m(w);
    let (w0, w1) = (x(r.width_m * 0.7), x(r.width_m * 1.3));
    let (zmin, zmax) = pts
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
            (a.min(p.1), b.max(p.1))
        });
    let band = r.target_ohm * r.tolerance_pct / 100.0;
    let flat = |z: f64| vec![(w0, z), (w1, z)];
    Ok(plot::line_plot(&LinePlot {
        title: format!("Impedance against width: {}", rule.name),
        x_label: format!("trace width ({})", unit.symbol()),
        y_label: "impedance (Ω)".into(),
        series: vec![
            Series {
                label: "computed".into(),
                points: pts.iter().map(|&(w, z)| (x(w), z)).collect(),
            },
            Series {
                label: format!("target {} Ω", format_sig(r.target_ohm, 4)),
                points: flat(r.target_ohm),
            },
            Series {
                label: format!("± {} %", format_sig(r.tolerance_pct, 3)),
                // One series, two lines: a non-finite point breaks the line (plot::line_plot).
                points: [
                    flat(r.target_ohm + band),
                    vec![(f64::NAN, f64::NAN)],
                    flat(r.target_ohm - band),
                ]
                .concat(),
            },
            Series {
                label: format!("solution {}", format_length(r.width_m, unit)),
                points: vec![(x(r.width_m), zmin), (x(r.width_m), zmax)],
            },
        ],
        log_x: false,
    }))
}

/// The Monte Carlo spread of one rule: the histogram SVG with the tolerance window, and its statistics.
#[derive(Debug, Clone, PartialEq)]
pub struct SpreadView {
    pub svg: String,
    pub samples: usize,
    pub failed: usize,
    pub mean_ohm: f64,
    pub sigma_ohm: f64,
    pub yield_pct: f64,
    pub lower_ohm: f64,
    pub upper_ohm: f64,
}

/// Runs the tolerance spread of rule `idx` (quadratic response surface, default samples and seed, the same
/// figures as `ohmstack spread --model quadratic`) and draws its histogram.
pub fn spread_view(project: &Project, idx: usize) -> Result<SpreadView, String> {
    let (rule, r, _) = solved_rule(project, idx)?;
    let opts = SpreadOptions {
        samples: spread::DEFAULT_SAMPLES,
        seed: spread::DEFAULT_SEED,
        centre: false,
        model: SampleModel::Quadratic,
    };
    let summary = spread::run(project, rule, &r, &opts).map_err(|e| e.to_string())?;
    // The summary keeps 32 bin counts only; the plot bins raw samples over the window too, so the samples are
    // drawn again exactly as `spread::run_with_model` draws them (same setup, surface, seed and deviates).
    let dims = Dims {
        w: r.width_m,
        s: r.spacing_m,
        gap: r.gap_m,
    };
    let err = |e: ohmstack_core::Error| e.to_string();
    let setup = spread::Setup::new(project, rule, &r.cross_section, &dims).map_err(err)?;
    let closed = spread::ClosedForm;
    let model: &dyn ImpedanceModel = &closed;
    let mut ev = setup.evaluator(model);
    let mut direct = |d: &[f64]| ev.z(d);
    let surface = spread::Quadratic::fit(&setup.params, &mut direct).map_err(err)?;
    let draws = spread::standard_draws(
        &setup.params,
        opts.samples,
        spread::rule_seed(opts.seed, &rule.name),
    )
    .map_err(err)?;
    let (_, samples) = spread::monte_carlo_on(
        &setup.params,
        &draws,
        setup.lower_ohm,
        setup.upper_ohm,
        &mut |d| Ok(surface.z(d)),
    )
    .map_err(err)?;
    let mc = &summary.monte_carlo;
    let svg = plot::histogram(&plot::Histogram {
        title: format!("Tolerance spread of {} ({} samples)", rule.name, mc.samples),
        x_label: "impedance (Ω)".into(),
        samples,
        bins: 40,
        window: Some((summary.lower_ohm, summary.upper_ohm)),
    });
    Ok(SpreadView {
        svg,
        samples: mc.samples,
        failed: mc.failed,
        mean_ohm: mc.mean_ohm,
        sigma_ohm: mc.sigma_ohm,
        yield_pct: mc.yield_pct,
        lower_ohm: summary.lower_ohm,
        upper_ohm: summary.upper_ohm,
    })
}

/// Touchstone text of a `length` segment of rule `idx` (50 Ω ports, the default sweep), with a file name ending
/// in `.s2p` (single line) or `.s4p` (pair). The title line matches the CLI's.
pub fn touchstone_file(
    project: &Project,
    idx: usize,
    length: &str,
) -> Result<(String, String), String> {
    let length_m = parse_length("length", length.trim()).map_err(|e| e.to_string())?;
    let (rule, _, model) = solved_rule(project, idx)?;
    let freqs = loss::Sweep::default()
        .frequencies()
        .map_err(|e| e.to_string())?;
    let title = format!("{} — rule {}", project.title, rule.name);
    let (text, ports) =
        touchstone::segment(&model, length_m, 50.0, &freqs, &title).map_err(|e| e.to_string())?;
    let stem: String = rule
        .name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' {
                c
            } else {
                '_'
            }
        })
        .take(60)
        .collect();
    let stem = if stem.is_empty() { "line".into() } else { stem };
    Ok((format!("{stem}.s{ports}p"), text))
}
