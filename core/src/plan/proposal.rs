//! A stack proposal: the project's layer order and roles, its rules at the widths the designer has (a rule that
//! solves its width: the width it solves to on the present stack), and a target
//! board thickness give each core and prepreg a glass construction (style, plies, resin content) whose thickness
//! puts the rules on target and the board on thickness, with mirrored layers built alike so the stack stays
//! symmetric. What cannot be met is said, with why.
//!
//! How (a greedy plan, our own; no source):
//! 1. Each rule is moved by the dielectrics between its trace and its reference planes. Rules are taken fewest
//!    free layers first; a rule's layer group (the layer and its mirror) is a free one, a prepreg before a core and
//!    the nearest to the trace first. The other free layers in its field keep their thickness (built from glass
//!    as they are), and the rules on the same copper that the group also moves share it (geometric mean of their
//!    solved thicknesses).
//! 2. The thickness solve ([`crate::plan::height`]) and the construction alternate: a construction at the solved
//!    thickness (resin content within a band around the style's usual, which makes any thickness in a style's
//!    range exact), its Dk from the mixing rule, the thickness solved again at that Dk, until the construction
//!    stops changing.
//! 3. Layers in no rule's field make up the board thickness, in proportion to their present thickness.
//! 4. Every rule is computed on the proposed stack at its width; one off its tolerance is reported with the reason.

use crate::base::error::{Error, Result};
use crate::base::units::format_sig;
use crate::design::construction::{
    GlassStyle, LayerConstruction, GLASS_DENSITY, GLASS_STYLES, RESIN_DENSITY,
};
use crate::design::project::{ImpedanceRule, Project, Solve};
use crate::design::stackup::Layer;
use crate::plan::height::solve_layers_thickness;
use serde::Serialize;

/// What the proposal may use.
#[derive(Debug, Clone, PartialEq)]
pub struct ProposalOptions {
    /// Finished board thickness to aim at, m; `None` keeps the layers in no rule's field as they are.
    pub target_thickness_m: Option<f64>,
    /// Glass styles allowed (all known styles when empty).
    pub styles: Vec<&'static GlassStyle>,
    /// Most plies in one prepreg; a core may have twice as many.
    pub max_plies: u32,
    /// How far the resin content may move from a style's usual one, ± percentage points.
    pub resin_band_pct: f64,
}

impl ProposalOptions {
    /// The styles a construction may use: the ones given, or every known style.
    fn allowed_styles(&self) -> Vec<&'static GlassStyle> {
        if self.styles.is_empty() {
            GLASS_STYLES.iter().collect()
        } else {
            self.styles.clone()
        }
    }
}

impl Default for ProposalOptions {
    /// Common practice, no source: up to 3 plies a prepreg, resin within ±6 points of the style's usual content.
    fn default() -> Self {
        ProposalOptions {
            target_thickness_m: None,
            styles: Vec::new(),
            max_plies: 3,
            resin_band_pct: 6.0,
        }
    }
}

/// A core or prepreg of the proposed stack.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ProposedLayer {
    pub layer: String,
    /// "core" or "prepreg".
    pub kind: &'static str,
    pub construction: LayerConstruction,
    /// As built (a prepreg's before pressing), m, and in the finished board.
    pub thickness_m: f64,
    pub pressed_thickness_m: f64,
    pub dk: f64,
    pub df: f64,
    /// What decided its thickness: the rules it was solved for, "board thickness" or "kept".
    pub set_by: String,
}

/// A rule on the proposed stack at its width.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ProposedRule {
    pub rule: String,
    pub layer: String,
    pub width_m: f64,
    pub target_ohm: f64,
    /// `None` when it could not be computed (the reason is among the proposal's `unmet`).
    pub impedance_ohm: Option<f64>,
    pub deviation_pct: Option<f64>,
    pub within_tolerance: bool,
}

/// The proposed stack and how it meets the rules and the board thickness.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Proposal {
    /// The project with the proposed constructions (thickness, Dk and Df applied).
    pub project: Project,
    pub layers: Vec<ProposedLayer>,
    pub rules: Vec<ProposedRule>,
    pub total_thickness_m: f64,
    pub target_thickness_m: Option<f64>,
    /// What could not be met, and why, one sentence each.
    pub unmet: Vec<String>,
}

/// The layer a group's members keep in step with: a dielectric and its mirror (or the centre layer alone).
#[derive(Debug, Clone)]
struct Group {
    members: Vec<usize>,
    /// The datasheet Dk and Df each member's construction is calibrated to (the layer's own, as entered).
    datasheet: (f64, f64),
    set_by: Option<String>,
}

impl Group {
    /// The group of `members`, calibrated to the first one's datasheet point: its construction's, or its Dk and
    /// Df as entered.
    fn of(d: &crate::design::stackup::Dielectric, members: Vec<usize>) -> Group {
        Group {
            members,
            datasheet: d
                .construction
                .as_ref()
                .map_or((d.dk, d.df), |c| (c.datasheet_dk, c.datasheet_df)),
            set_by: None,
        }
    }
}

/// Proposes constructions for every core and prepreg of `project` (see the module doc).
pub fn propose_stack(project: &Project, options: &ProposalOptions) -> Result<Proposal> {
    project.validate()?;
    let mut p = project.clone();
    // The widths the designer has now: a rule that solves a dimension keeps the one it solves to on the present
    // stack (its stored width is only the search's start); a fixed rule keeps its own.
    let present = crate::plan::plan(project)?;
    for (rule, outcome) in p.rules.iter_mut().zip(&present.rules) {
        if let (true, Some(r)) = (rule.solve != Solve::Nothing, outcome.ok()) {
            rule.width_m = r.width_m;
            rule.spacing_m = r.spacing_m.or(rule.spacing_m);
            rule.gap_m = r.gap_m.or(rule.gap_m);
        }
    }
    let n = p.stackup.layers.len();
    for i in 0..n / 2 {
        let (a, b) = (&p.stackup.layers[i], &p.stackup.layers[n - 1 - i]);
        if a.kind_name() != b.kind_name() {
            return Err(Error::Invalid {
                field: "stack".into(),
                reason: format!(
                    "{:?} ({}) and its mirror {:?} ({}) differ: a symmetric proposal needs the same kind of layer \
                     at mirrored places",
                    a.name(),
                    a.kind_name(),
                    b.name(),
                    b.kind_name()
                ),
            });
        }
    }
    if let Some(t) = options.target_thickness_m {
        crate::base::error::in_range("target thickness", t * 1e3, 0.05, 20.0, "mm")?;
    }
    crate::base::error::in_range("resin band", options.resin_band_pct, 0.0, 20.0, "%")?;
    if !(1..=6).contains(&options.max_plies) {
        return Err(Error::Invalid {
            field: "plies".into(),
            reason: format!("{} plies at most: give 1 to 6", options.max_plies),
        });
    }
    let styles = options.allowed_styles();
    let mut groups: Vec<Group> = Vec::new();
    let mut group_of = vec![None; n];
    for i in 0..n {
        let Some(d) = built_layer(&p.stackup.layers[i]) else {
            continue;
        };
        if group_of[i].is_some() {
            continue;
        }
        let mirror = n - 1 - i;
        let members = if mirror == i {
            vec![i]
        } else {
            vec![i, mirror]
        };
        for &m in &members {
            group_of[m] = Some(groups.len());
        }
        groups.push(Group::of(d, members));
    }
    let mut unmet = Vec::new();
    let mirrored_copper = (0..n / 2).all(|i| {
        match (
            p.stackup.layers[i].copper(),
            p.stackup.layers[n - 1 - i].copper(),
        ) {
            (Some(a), Some(b)) => (a.thickness_m - b.thickness_m).abs() <= 0.01 * a.thickness_m,
            _ => true,
        }
    });
    if !mirrored_copper {
        unmet.push(
            "the copper weights are not mirrored: the dielectrics are, but the stack as a whole is not symmetric"
                .to_string(),
        );
    }

    // Which groups each rule's field spans (the dielectrics between its trace(s) and its planes).
    let spans: Vec<Option<Vec<usize>>> = p
        .rules
        .iter()
        .map(|rule| rule_span(&p, rule, &group_of))
        .collect();
    for (rule, span) in p.rules.iter().zip(&spans) {
        if span.is_none() {
            unmet.push(format!(
                "{}: its cross-section could not be resolved on this stack, so no layer was set for it",
                rule.name
            ));
        }
    }
    let mut done = vec![false; p.rules.len()];
    // Each solved group with the rules it was solved for.
    let mut assigned: Vec<(usize, Vec<usize>)> = Vec::new();
    loop {
        let free = |g: &usize, groups: &[Group]| groups[*g].set_by.is_none();
        // The rule with the fewest free groups in its field (at least one).
        let pick = (0..p.rules.len())
            .filter(|&r| !done[r])
            .filter_map(|r| {
                let count = spans[r]
                    .as_ref()?
                    .iter()
                    .filter(|g| free(g, &groups))
                    .count();
                (count > 0).then_some((count, r))
            })
            .min();
        let Some((_, r)) = pick else { break };
        let rule = p.rules[r].clone();
        let trace = p.stackup.find(&rule.layer).unwrap_or(0);
        let span = spans[r].clone().unwrap_or_default();
        // The candidates: the side of the nearer plane first (it dominates the impedance), a prepreg before a
        // core, the nearest to the trace first; the first whose solve succeeds is taken.
        let mut candidates: Vec<usize> =
            span.iter().copied().filter(|g| free(g, &groups)).collect();
        candidates.sort_by(|&a, &b| {
            let key = |g: usize| {
                let m = groups[g]
                    .members
                    .iter()
                    .copied()
                    .min_by_key(|m| m.abs_diff(trace))
                    .unwrap_or(0);
                (
                    side_height(&p, trace, m < trace),
                    !matches!(p.stackup.layers[m], Layer::Prepreg(_)),
                    m.abs_diff(trace),
                )
            };
            let (ka, kb) = (key(a), key(b));
            ka.0.total_cmp(&kb.0)
                .then(ka.1.cmp(&kb.1))
                .then(ka.2.cmp(&kb.2))
        });
        let solvable = candidates
            .iter()
            .copied()
            .find(|&g| solve_group(&p, &rule, &groups[g]).is_ok());
        let chosen = solvable.unwrap_or(candidates[0]);
        // The other free layers in its field keep their thickness for now, built from glass as they are (they
        // make up the board thickness later when no layer outside every rule's field can).
        let others: Vec<usize> = span
            .iter()
            .copied()
            .filter(|g| *g != chosen && free(g, &groups))
            .collect();
        for g in others {
            let t = thickness_of(&p, &groups[g]);
            build(&mut p, &groups[g], t, &styles, options)?;
            groups[g].set_by = Some(format!("kept (in the field of {})", rule.name));
        }
        // The rules on the same copper whose field this group is also in share it.
        let sharing: Vec<usize> = (0..p.rules.len())
            .filter(|&o| !done[o] && p.rules[o].layer == rule.layer)
            .filter(|&o| spans[o].as_ref().is_some_and(|s| s.contains(&chosen)))
            .collect();
        settle(&mut p, &groups[chosen], &sharing, &styles, options)?;
        groups[chosen].set_by = Some(
            sharing
                .iter()
                .map(|&o| p.rules[o].name.clone())
                .collect::<Vec<_>>()
                .join(", "),
        );
        for &o in &sharing {
            done[o] = true;
        }
        done[r] = true;
        assigned.push((chosen, sharing));
    }

    // The layers in no rule's field make up the board thickness; when there are none, the layers kept as they
    // were in a rule's field do, and the solved layers are solved again around them until both hold.
    let outside: Vec<usize> = (0..groups.len())
        .filter(|&g| groups[g].set_by.is_none())
        .collect();
    let kept: Vec<usize> = (0..groups.len())
        .filter(|&g| {
            groups[g]
                .set_by
                .as_deref()
                .is_some_and(|s| s.starts_with("kept"))
        })
        .collect();
    let fill = if outside.is_empty() {
        kept
    } else {
        outside.clone()
    };
    match options.target_thickness_m {
        Some(target) if !fill.is_empty() => {
            for _ in 0..6 {
                let fill_pressed: f64 = fill
                    .iter()
                    .flat_map(|&g| groups[g].members.clone())
                    .map(|m| p.stackup.pressed_thickness_m(m))
                    .sum();
                let fixed = p.stackup.total_thickness_m() - fill_pressed;
                let needed = target - fixed;
                if needed <= 0.1 * fill_pressed {
                    unmet.push(format!(
                        "board thickness: the layers the rules set, the copper and the mask already make {} µm                          of the {} µm target, too little is left for the other layers",
                        format_sig(fixed * 1e6, 4),
                        format_sig(target * 1e6, 4)
                    ));
                    break;
                }
                let scale = needed / fill_pressed;
                for &g in &fill {
                    // The pressing loss stays what it is; the pressed part scales.
                    let m = groups[g].members[0];
                    let pressed = p.stackup.pressed_thickness_m(m);
                    let loss = thickness_of(&p, &groups[g]) - pressed;
                    build(&mut p, &groups[g], pressed * scale + loss, &styles, options)?;
                    groups[g].set_by = Some("board thickness".into());
                }
                if outside.is_empty() {
                    for (g, sharing) in &assigned {
                        settle(&mut p, &groups[*g], sharing, &styles, options)?;
                    }
                }
                if (p.stackup.total_thickness_m() / target - 1.0).abs() < 1e-3 {
                    break;
                }
            }
        }
        _ => {}
    }
    // Solves that still fail are said with their reason.
    for (g, sharing) in &assigned {
        for &o in sharing {
            if let Err(e) = solve_group(&p, &p.rules[o], &groups[*g]) {
                unmet.push(format!("{}: {e}", p.rules[o].name));
            }
        }
    }
    // Layers still without a construction are built as they are.
    for group in groups.iter_mut().filter(|g| g.set_by.is_none()) {
        let t = thickness_of(&p, group);
        build(&mut p, group, t, &styles, options)?;
        group.set_by = Some("kept".into());
    }
    p.stackup.apply_constructions()?;
    let total = p.stackup.total_thickness_m();
    if let Some(target) = options.target_thickness_m {
        let tol = p.fab.thickness_tolerance();
        if (total / target - 1.0).abs() > tol {
            unmet.push(format!(
                "board thickness: {} µm against the {} µm target ({:+.1} %, outside ± {} %)",
                format_sig(total * 1e6, 4),
                format_sig(target * 1e6, 4),
                (total / target - 1.0) * 100.0,
                format_sig(tol * 100.0, 3)
            ));
        }
    }

    // Every rule at its width on the proposed stack.
    let mut rules = Vec::new();
    for rule in &p.rules {
        let fixed = ImpedanceRule {
            solve: Solve::Nothing,
            ..rule.clone()
        };
        let z = crate::plan::rule::evaluate_rule(&p, &fixed).map(|r| r.impedance_ohm);
        let deviation = z.as_ref().ok().map(|z| (z / rule.target_ohm - 1.0) * 100.0);
        let within = deviation.is_some_and(|d| d.abs() <= rule.tolerance_pct);
        match (&z, deviation) {
            (Err(e), _) => unmet.push(format!("{}: {e}", rule.name)),
            (Ok(z), Some(d)) if !within => unmet.push(format!(
                "{}: {:.2} Ω against {} Ω ({d:+.1} %) at its width; {}",
                rule.name,
                z,
                format_sig(rule.target_ohm, 4),
                why_off(&p, rule, &spans, &groups)
            )),
            _ => {}
        }
        rules.push(ProposedRule {
            rule: rule.name.clone(),
            layer: rule.layer.clone(),
            width_m: rule.width_m,
            target_ohm: rule.target_ohm,
            impedance_ohm: z.ok(),
            deviation_pct: deviation,
            within_tolerance: within,
        });
    }
    let layers = groups
        .iter()
        .flat_map(|g| {
            g.members
                .iter()
                .map(move |&m| (m, g.set_by.clone().unwrap_or_default()))
        })
        .filter_map(|(m, set_by)| {
            let layer = &p.stackup.layers[m];
            let d = built_layer(layer)?;
            Some((
                m,
                ProposedLayer {
                    layer: d.name.clone(),
                    kind: layer.kind_name(),
                    construction: d.construction.clone()?,
                    thickness_m: d.thickness_m,
                    pressed_thickness_m: p.stackup.pressed_thickness_m(m),
                    dk: d.dk,
                    df: d.df,
                    set_by,
                },
            ))
        })
        .collect::<std::collections::BTreeMap<usize, ProposedLayer>>()
        .into_values()
        .collect();
    Ok(Proposal {
        project: p,
        layers,
        rules,
        total_thickness_m: total,
        target_thickness_m: options.target_thickness_m,
        unmet,
    })
}

/// A core's or prepreg's dielectric (the layers a proposal builds).
fn built_layer(layer: &Layer) -> Option<&crate::design::stackup::Dielectric> {
    match layer {
        Layer::Core(d) | Layer::Prepreg(d) => Some(d),
        _ => None,
    }
}

/// The groups between a rule's trace(s) and its reference planes; `None` when the section does not resolve.
fn rule_span(p: &Project, rule: &ImpedanceRule, group_of: &[Option<usize>]) -> Option<Vec<usize>> {
    let cs = crate::section::resolve(&p.stackup, rule).ok()?;
    let mut traces = vec![p.stackup.find(&rule.layer)?];
    if let Some(partner) = &rule.partner_layer {
        traces.push(p.stackup.find(partner)?);
    }
    let (lo, hi) = (*traces.iter().min()?, *traces.iter().max()?);
    let mut span = Vec::new();
    for plane in cs.references.iter().filter_map(|r| p.stackup.find(r)) {
        let between = if plane < lo {
            plane + 1..lo
        } else {
            hi + 1..plane
        };
        span.extend(between.chain(lo + 1..hi).filter_map(|i| group_of[i]));
    }
    if cs.references.is_empty() {
        // A coplanar line with no plane: the sheet it sits on.
        span.extend(
            [lo.checked_sub(1), Some(hi + 1)]
                .into_iter()
                .flatten()
                .filter_map(|i| group_of.get(i).copied().flatten()),
        );
    }
    span.sort_unstable();
    span.dedup();
    Some(span)
}

/// Solves the group's thickness for the rules that share it and builds it from glass, again at the construction's
/// Dk, until the solve agrees with what is built (or the construction can make it no closer).
fn settle(
    p: &mut Project,
    g: &Group,
    sharing: &[usize],
    styles: &[&'static GlassStyle],
    options: &ProposalOptions,
) -> Result<()> {
    // Secant steps on f(t) = solved(t) − t, where solved(t) is the thickness the rules want with the layer built
    // at t (its Dk moves with the resin content the thickness takes); a plain repeat converges slowly.
    let wanted = |p: &Project| -> Option<f64> {
        let solved: Vec<f64> = sharing
            .iter()
            .filter_map(|&o| solve_group(p, &p.rules[o], g).ok())
            .collect();
        (!solved.is_empty())
            .then(|| (solved.iter().map(|t| t.ln()).sum::<f64>() / solved.len() as f64).exp())
    };
    let Some(mut x) = wanted(p) else {
        let t = thickness_of(p, g);
        build(p, g, t, styles, options)?;
        return Ok(());
    };
    let mut last: Option<(f64, f64)> = None;
    for _ in 0..12 {
        let made = build(p, g, x, styles, options)?;
        let Some(w) = wanted(p) else { break };
        let f = w - made;
        if (f / made).abs() < 1e-9 {
            break;
        }
        x = match last {
            // The construction at its limit: nothing closer can be built.
            Some((m0, _)) if (made / m0 - 1.0).abs() < 1e-12 => break,
            Some((m0, f0)) if f != f0 => made - f * (made - m0) / (f - f0),
            _ => w,
        };
        last = Some((made, f));
    }
    Ok(())
}

/// Height from the trace at `trace` to the nearest plane above (`above`) or below, m (infinite without one).
fn side_height(p: &Project, trace: usize, above: bool) -> f64 {
    let layers = &p.stackup.layers;
    let is_plane = |i: usize| {
        layers[i]
            .copper()
            .is_some_and(|c| c.role == crate::design::stackup::CopperRole::Plane)
    };
    let range: Vec<usize> = if above {
        (0..trace).rev().collect()
    } else {
        (trace + 1..layers.len()).collect()
    };
    let mut h = 0.0;
    for i in range {
        if is_plane(i) {
            return h;
        }
        h += p.stackup.pressed_thickness_m(i);
    }
    f64::INFINITY
}

fn thickness_of(p: &Project, g: &Group) -> f64 {
    p.stackup.layers[g.members[0]].thickness_m()
}

/// The thickness of the group's layers that puts `rule` on target.
fn solve_group(p: &Project, rule: &ImpedanceRule, g: &Group) -> Result<f64> {
    let names: Vec<&str> = g
        .members
        .iter()
        .map(|&m| p.stackup.layers[m].name())
        .collect();
    solve_layers_thickness(p, rule, &names).map(|t| t.thickness_m)
}

/// Gives every member of the group the construction nearest `thickness_m` (as built) and applies it; returns the
/// thickness it builds to.
fn build(
    p: &mut Project,
    g: &Group,
    thickness_m: f64,
    styles: &[&'static GlassStyle],
    options: &ProposalOptions,
) -> Result<f64> {
    let core = matches!(p.stackup.layers[g.members[0]], Layer::Core(_));
    let max_plies = if core {
        2 * options.max_plies
    } else {
        options.max_plies
    };
    let c = nearest_construction(
        thickness_m,
        g.datasheet,
        styles,
        max_plies,
        options.resin_band_pct / 100.0,
    );
    let mut made = thickness_m;
    for &m in &g.members {
        if let Layer::Core(d) | Layer::Prepreg(d) = &mut p.stackup.layers[m] {
            d.construction = Some(c.clone());
            d.apply_construction()?;
            made = d.thickness_m;
        }
    }
    Ok(made)
}

/// The construction whose thickness is nearest `thickness_m`: every style and ply count, the resin content that
/// gives the thickness exactly (closed form from the ply's volumes), held inside the band. Among those within
/// 0.1 % of the thickness the fewest plies win, then the resin content nearest the style's usual one.
pub fn nearest_construction(
    thickness_m: f64,
    (dk, df): (f64, f64),
    styles: &[&'static GlassStyle],
    max_plies: u32,
    band: f64,
) -> LayerConstruction {
    let mut best: Option<((bool, u32, f64, f64), LayerConstruction)> = None;
    for style in styles {
        for plies in 1..=max_plies {
            // Per ply: glass W/ρg plus resin W·r/((1 − r)·ρr) = t/plies, solved for r.
            let glass_m = style.weight_g_m2 / (GLASS_DENSITY * 1e6);
            let resin_m = thickness_m / f64::from(plies) - glass_m;
            let a = (resin_m * RESIN_DENSITY * 1e6 / style.weight_g_m2).max(0.0);
            let exact = a / (1.0 + a);
            let (lo, hi) = (
                (style.typical_resin - band).max(0.3),
                (style.typical_resin + band).min(0.8),
            );
            let resin = exact.clamp(lo, hi);
            let made = f64::from(plies) * crate::design::construction::ply(style, resin).1;
            let miss = (made / thickness_m - 1.0).abs();
            let key = (
                miss > 1e-3,
                if miss > 1e-3 { 0 } else { plies },
                if miss > 1e-3 { miss } else { 0.0 },
                (resin - style.typical_resin).abs(),
            );
            let mut c = LayerConstruction::typical(style, plies, dk, df);
            c.resin_pct = resin * 100.0;
            if best
                .as_ref()
                .is_none_or(|(k, _)| key.partial_cmp(k) == Some(std::cmp::Ordering::Less))
            {
                best = Some((key, c));
            }
        }
    }
    best.map(|b| b.1)
        .unwrap_or_else(|| LayerConstruction::typical(&GLASS_STYLES[0], 1, dk, df))
}

/// Why a rule is off target on the proposed stack, in a few words.
fn why_off(
    p: &Project,
    rule: &ImpedanceRule,
    spans: &[Option<Vec<usize>>],
    groups: &[Group],
) -> String {
    let r = p.rules.iter().position(|x| x.name == rule.name);
    let span = r.and_then(|r| spans[r].clone()).unwrap_or_default();
    let setters: Vec<&str> = span
        .iter()
        .filter_map(|&g| groups[g].set_by.as_deref())
        .collect();
    let own = setters
        .iter()
        .any(|s| s.split(", ").any(|n| n == rule.name));
    let others: Vec<&str> = setters
        .iter()
        .flat_map(|s| s.split(", "))
        .filter(|n| *n != rule.name && !n.starts_with("kept") && *n != "board thickness")
        .collect();
    match (own, others.is_empty()) {
        (true, false) => format!(
            "it shares its dielectric with {}: the thickness is their geometric mean, so a width change on one \
             of them puts both on target",
            others.join(", ")
        ),
        (false, false) => format!(
            "its dielectrics were set for {} (or their mirror): change its width, or move it to a layer of its own",
            others.join(", ")
        ),
        _ => "the nearest construction misses the thickness it needs (see the layers' resin contents)".to_string(),
    }
}

/// A layer's solved thickness snapped to a construction.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SnappedThickness {
    pub layer: String,
    pub construction: LayerConstruction,
    /// As built (a prepreg's before pressing), m.
    pub thickness_m: f64,
    pub dk: f64,
    /// The rule's impedance with the layer so built, at the rule's width, Ω.
    pub impedance_ohm: f64,
    pub target_ohm: f64,
}

/// The construction that puts `rule` on target through `layer` alone: the thickness solve and the construction
/// alternate (its Dk moves with the resin content) until they agree.
pub fn snap_layer_thickness(
    project: &Project,
    rule: &ImpedanceRule,
    layer: &str,
    options: &ProposalOptions,
) -> Result<SnappedThickness> {
    let mut p = project.clone();
    let idx = p.stackup.find(layer).ok_or_else(|| Error::Invalid {
        field: "layer".into(),
        reason: format!("no layer named {layer:?} in the stack"),
    })?;
    let not_built = || Error::Invalid {
        field: "layer".into(),
        reason: format!("{layer:?} is not a core or a prepreg"),
    };
    let group = Group::of(
        built_layer(&p.stackup.layers[idx]).ok_or_else(not_built)?,
        vec![idx],
    );
    let styles = options.allowed_styles();
    // The reason when no thickness of this layer puts the rule on target; then the same secant steps as the
    // proposal, on the rule as the project holds it.
    solve_group(&p, rule, &group)?;
    let r = p
        .rules
        .iter()
        .position(|x| x.name == rule.name)
        .ok_or_else(|| Error::Invalid {
            field: "rule".into(),
            reason: format!("no rule named {:?} in the project", rule.name),
        })?;
    settle(&mut p, &group, &[r], &styles, options)?;
    let fixed = ImpedanceRule {
        solve: Solve::Nothing,
        ..rule.clone()
    };
    let z = crate::plan::rule::evaluate_rule(&p, &fixed)?.impedance_ohm;
    let d = built_layer(&p.stackup.layers[idx]).ok_or_else(not_built)?;
    Ok(SnappedThickness {
        layer: layer.to_string(),
        construction: d.construction.clone().unwrap_or_else(|| {
            LayerConstruction::typical(&GLASS_STYLES[0], 1, group.datasheet.0, group.datasheet.1)
        }),
        thickness_m: d.thickness_m,
        dk: d.dk,
        impedance_ohm: z,
        target_ohm: rule.target_ohm,
    })
}
