//! The field plan rule by rule, off the page's thread: the messages between the page and its plan worker, and the
//! worker's scheduler with its per-rule cache. Plain Rust (no browser types), so the protocol is tested natively;
//! `worker.rs` and `plan_client.rs` only move these messages across.

use crate::bridge::plan_one_rule;
use ohmstack_core::design::project::{ImpedanceRule, Project};
use ohmstack_core::{PlanOptions, RuleOutcome};
use serde::{Deserialize, Serialize};

/// What the page asks of the worker: plan this project; a higher generation replaces every older request.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Request {
    pub generation: u64,
    /// The project as JSON (plain serde: the page's project is already valid and migrated).
    pub project: String,
    /// Whether to follow each rule's nominal figures with its tolerance spread. False while the user is typing:
    /// a transient value (the "2" on the way to "210") gets its figures but never feeds the spread (issue 17).
    #[serde(default = "yes")]
    pub spread: bool,
    /// The rules (by index) this planner plans, when the page shares the plan among several workers
    /// ([`share_rules`]); every rule when absent.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rules: Option<Vec<usize>>,
}

fn yes() -> bool {
    true
}

/// Prefix of a stack proposal's messages, which a worker of its own answers beside the plan's protocol.
pub const PROPOSAL_TAG: &str = "propose:";

/// A stack proposal asked of a worker: the project (plain serde JSON) and the board thickness to aim at.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ProposalRequest {
    pub project: String,
    pub target_thickness_m: Option<f64>,
}

/// A proposal's answer: the proposed project (JSON) and what it could not meet, or why there is none.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ProposalReply {
    pub project: Option<String>,
    #[serde(default)]
    pub unmet: Vec<String>,
    pub error: Option<String>,
}

/// Runs a proposal (`plan::proposal`) with the default options and the request's target thickness.
pub fn run_proposal(request: &ProposalRequest) -> ProposalReply {
    let failed = |error: String| ProposalReply {
        project: None,
        unmet: Vec::new(),
        error: Some(error),
    };
    let project: Project = match serde_json::from_str(&request.project) {
        Ok(p) => p,
        Err(e) => return failed(format!("the proposal got a project it cannot read: {e}")),
    };
    let options = ohmstack_core::plan::proposal::ProposalOptions {
        target_thickness_m: request.target_thickness_m,
        ..Default::default()
    };
    match ohmstack_core::plan::proposal::propose_stack(&project, &options) {
        Ok(p) => ProposalReply {
            project: serde_json::to_string(&p.project).ok(),
            unmet: p.unmet,
            error: None,
        },
        Err(e) => failed(e.to_string()),
    }
}

/// What the worker reports, each for the generation it was asked under.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Update {
    /// One rule's outcome on the field engine: first its nominal figures (with the field check), then the same
    /// with the tolerance spread, which takes far longer (`complete`).
    Rule {
        generation: u64,
        index: usize,
        outcome: Box<RuleOutcome>,
        /// True when the outcome carries everything the options ask (the spread too).
        complete: bool,
        /// False when the outcome came from the cache (nothing the rule depends on changed).
        computed: bool,
        /// Rules computed in full (not taken from the cache) since the worker started.
        computations: u64,
    },
    /// Every rule of the generation has been reported.
    Done { generation: u64, computations: u64 },
    /// The request could not be planned at all (unreadable project or invalid stack).
    Failed { generation: u64, message: String },
}

impl Update {
    pub fn generation(&self) -> u64 {
        match self {
            Update::Rule { generation, .. }
            | Update::Done { generation, .. }
            | Update::Failed { generation, .. } => *generation,
        }
    }
}

/// The options of the field plan (see [`crate::bridge::field_options`]).
pub fn options() -> PlanOptions {
    crate::bridge::field_options()
}

/// Everything one rule's outcome depends on: the project without its title, revision and other rules (the rule's
/// name is kept: the outcome carries it), and the options. Over-inclusive by design: a field added
/// to the project later is part of the key until someone shows the rules do not read it.
pub fn rule_key(project: &Project, rule: &ImpedanceRule, options: &PlanOptions) -> String {
    let slice = Project {
        title: String::new(),
        revision: String::new(),
        rules: vec![rule.clone()],
        ..project.clone()
    };
    let options = (
        options.spread_samples,
        options.seed,
        format!("{:?}", options.spread_model),
        options.field_check,
        options.closed_form_only,
        options.routing,
    );
    // Serialising plain data cannot fail; an empty key would only cost a recomputation.
    serde_json::to_string(&(slice, options)).unwrap_or_default()
}

/// Outcomes kept: a 16-rule board with a few variants of each rule edited back and forth.
const CACHE_ENTRIES: usize = 256;

/// Values by key, at most [`CACHE_ENTRIES`], least recently used dropped first: the planners' rule outcomes by
/// [`rule_key`] and the page's landed outcomes by its hash.
#[derive(Debug)]
struct RuleCache<K, V> {
    entries: Vec<(K, V)>,
}

impl<K, V> Default for RuleCache<K, V> {
    fn default() -> Self {
        RuleCache {
            entries: Vec::new(),
        }
    }
}

impl<K: PartialEq, V: Clone> RuleCache<K, V> {
    fn get(&mut self, key: &K) -> Option<V> {
        let at = self.entries.iter().position(|(k, _)| k == key)?;
        let entry = self.entries.remove(at);
        let value = entry.1.clone();
        self.entries.push(entry);
        Some(value)
    }

    fn put(&mut self, key: K, value: V) {
        self.entries.retain(|(k, _)| *k != key);
        if self.entries.len() >= CACHE_ENTRIES {
            self.entries.remove(0);
        }
        self.entries.push((key, value));
    }
}

/// The request being worked on: first every rule's nominal figures, then the spreads, so that every card shows
/// field figures before any spread is started.
#[derive(Debug)]
struct Job {
    generation: u64,
    project: Project,
    /// The rules this planner plans, in order.
    rules: Vec<usize>,
    /// Position of the next rule in `rules` (first pass) or in `spread_due` (second pass).
    next: usize,
    /// The second pass: spreads.
    spreads: bool,
    /// Rules whose nominal figures went out without their spread, in that order.
    spread_due: Vec<usize>,
    /// The request asks for the spread (see [`Request::spread`]).
    spread: bool,
}

/// Relative field work of a rule on its structure (the with-spread plan of the 12-layer fixture, natively:
/// single lines 15–70 ms, edge pairs and coplanar lines 50–140 ms, the broadside pair 180 ms, coplanar pairs
/// 230–270 ms); a closed-form rule is next to free.
fn work_of(rule: &ImpedanceRule) -> u32 {
    use ohmstack_core::design::project::{RuleModel, Structure};
    if rule.model == RuleModel::ClosedForm {
        return 1;
    }
    match rule.structure {
        Structure::Single => 10,
        Structure::EdgePair | Structure::Coplanar => 25,
        Structure::BroadsidePair => 50,
        Structure::CoplanarPair => 80,
    }
}

/// Splits the rules of `project` among `planners` so that each gets about the same field work: heaviest first,
/// each to the least loaded so far (Graham's longest-processing-time rule, 1969). It reads only each rule's
/// structure and model, so editing a value leaves every rule with the planner that has it cached.
pub fn share_rules(project: &Project, planners: usize) -> Vec<Vec<usize>> {
    let planners = planners.max(1);
    let mut order: Vec<usize> = (0..project.rules.len()).collect();
    // Stable: equal work keeps the page's order.
    order.sort_by_key(|&i| std::cmp::Reverse(work_of(&project.rules[i])));
    let mut shares = vec![Vec::new(); planners];
    let mut load = vec![0u32; planners];
    for i in order {
        let least = (0..planners).min_by_key(|&k| (load[k], k)).unwrap_or(0);
        load[least] += work_of(&project.rules[i]);
        shares[least].push(i);
    }
    for share in &mut shares {
        share.sort_unstable();
    }
    shares
}

/// The worker's state: the newest request, how far it got, and the cache. Each [`Planner::step`] does one rule, so
/// the caller can yield between steps and let a newer request replace the job (stale work is dropped, not
/// finished).
#[derive(Debug)]
pub struct Planner {
    options: PlanOptions,
    cache: RuleCache<String, RuleOutcome>,
    job: Option<Job>,
    /// The newest generation seen; older requests arriving late are ignored.
    latest: u64,
    computations: u64,
    /// A request that failed before any rule, reported by the next step.
    failure: Option<(u64, String)>,
}

impl Default for Planner {
    fn default() -> Self {
        Planner::new(options())
    }
}

impl Planner {
    pub fn new(options: PlanOptions) -> Self {
        Planner {
            options,
            cache: RuleCache::default(),
            job: None,
            latest: 0,
            computations: 0,
            failure: None,
        }
    }

    /// Takes a request: it replaces the current job when newer; an older or repeated generation is ignored
    /// (the page counts generations from 1).
    pub fn request(&mut self, request: &Request) {
        if request.generation <= self.latest {
            return;
        }
        self.latest = request.generation;
        self.job = None;
        self.failure = None;
        let project = serde_json::from_str::<Project>(&request.project)
            .map_err(|e| format!("the project could not be read: {e}"))
            .and_then(|p| p.stackup.validate().map(|_| p).map_err(|e| e.to_string()));
        match project {
            Ok(project) => {
                let count = project.rules.len();
                let rules = match &request.rules {
                    Some(share) => share.iter().copied().filter(|&i| i < count).collect(),
                    None => (0..count).collect(),
                };
                self.job = Some(Job {
                    generation: request.generation,
                    project,
                    rules,
                    next: 0,
                    spreads: false,
                    spread_due: Vec::new(),
                    spread: request.spread,
                })
            }
            Err(message) => self.failure = Some((request.generation, message)),
        }
    }

    /// True while a step has something to report.
    pub fn busy(&self) -> bool {
        self.job.is_some() || self.failure.is_some()
    }

    /// Rules computed (not taken from the cache) so far.
    #[cfg(test)]
    pub fn computations(&self) -> u64 {
        self.computations
    }

    /// Steps until something has been computed (or the job ends, or there is nothing to do): rules taken from the
    /// cache cost next to nothing, so they travel with the next computed row as one message and one render.
    pub fn run_batch(&mut self) -> Vec<Update> {
        let mut batch = Vec::new();
        while let Some(update) = self.step() {
            let end = !matches!(
                update,
                Update::Rule {
                    computed: false,
                    ..
                }
            );
            batch.push(update);
            if end {
                break;
            }
        }
        batch
    }

    /// The next piece of the current job: in the first pass a rule from the cache, or a rule's nominal figures on
    /// its engine with the field check (milliseconds); in the second pass one rule's tolerance spread (the slow
    /// part); then the job's end. `None` when idle.
    pub fn step(&mut self) -> Option<Update> {
        if let Some((generation, message)) = self.failure.take() {
            return Some(Update::Failed {
                generation,
                message,
            });
        }
        let job = self.job.as_mut()?;
        if !job.spreads && job.next >= job.rules.len() {
            job.spreads = true;
            job.next = 0;
        }
        let index = if job.spreads {
            job.spread_due.get(job.next).copied()
        } else {
            job.rules.get(job.next).copied()
        };
        let Some(index) = index else {
            let generation = job.generation;
            self.job = None;
            return Some(Update::Done {
                generation,
                computations: self.computations,
            });
        };
        job.next += 1;
        let rule = &job.project.rules[index];
        let key = rule_key(&job.project, rule, &self.options);
        let nominal = PlanOptions {
            spread_samples: 0,
            routing: false,
            ..self.options
        };
        // The nominal figures are cached too, under their own options: a request with the spread after a pause in
        // typing starts from them.
        let nominal_key = rule_key(&job.project, rule, &nominal);
        let (outcome, complete, computed) = if job.spreads {
            (plan_one_rule(&job.project, rule, &self.options), true, true)
        } else if let Some(hit) = self.cache.get(&key) {
            (hit, true, false)
        } else if nominal == self.options {
            (plan_one_rule(&job.project, rule, &self.options), true, true)
        } else if let Some(hit) = self.cache.get(&nominal_key) {
            let complete = matches!(hit, RuleOutcome::Error { .. });
            (hit, complete, false)
        } else {
            let outcome = plan_one_rule(&job.project, rule, &nominal);
            // A rule that cannot be computed has no spread to follow.
            let complete = matches!(outcome, RuleOutcome::Error { .. });
            (outcome, complete, true)
        };
        if complete {
            if computed {
                self.computations += 1;
                self.cache.put(key, outcome.clone());
            }
        } else {
            if computed {
                self.cache.put(nominal_key, outcome.clone());
            }
            if job.spread {
                job.spread_due.push(index);
            }
        }
        Some(Update::Rule {
            generation: job.generation,
            index,
            outcome: Box::new(outcome),
            complete,
            computed,
            computations: self.computations,
        })
    }
}

/// A rule's key (see [`rule_key`]) as a number: the page keeps many landed outcomes, and a key is the size of the
/// project. The hash (SipHash with fixed keys) is the same in every worker and on the page.
fn key_hash(project: &Project, rule: &ImpedanceRule, options: &PlanOptions) -> u64 {
    use std::hash::{Hash, Hasher};
    let mut h = std::collections::hash_map::DefaultHasher::new();
    rule_key(project, rule, options).hash(&mut h);
    h.finish()
}

/// The page's copy of every rule outcome that landed, so that a new request asks the workers only for the rules
/// whose outcome the page does not already hold: after a one-rule edit only that rule is pending on screen (the
/// others keep their figures), and nothing else crosses from the workers.
#[derive(Debug, Default)]
pub struct Landed {
    /// (outcome, complete) by key hash.
    entries: RuleCache<u64, (RuleOutcome, bool)>,
    /// The request out: its generation and each rule's key hashes (with the options asked, nominal only).
    current: u64,
    keys: Vec<(u64, u64)>,
}

impl Landed {
    /// For a request about to go out: the updates the page can take at once (the rules whose outcome it holds)
    /// and the rules still to plan.
    pub fn prepare(
        &mut self,
        generation: u64,
        project: &Project,
        spread: bool,
    ) -> (Vec<Update>, Vec<usize>) {
        // Outcomes are kept under the key of what they carry: with the spread (complete) or without.
        let full = options();
        let nominal = PlanOptions {
            spread_samples: 0,
            routing: false,
            ..full
        };
        self.current = generation;
        self.keys = project
            .rules
            .iter()
            .map(|r| (key_hash(project, r, &full), key_hash(project, r, &nominal)))
            .collect();
        let (mut held, mut needed) = (Vec::new(), Vec::new());
        for (index, &(full_key, nominal_key)) in self.keys.iter().enumerate() {
            let found = match self.entries.get(&full_key) {
                Some((outcome, true)) => Some((outcome, true)),
                // A rule that cannot be computed has no spread to follow.
                _ => self.entries.get(&nominal_key).map(|(outcome, _)| {
                    let error = matches!(outcome, RuleOutcome::Error { .. });
                    (outcome, error)
                }),
            };
            let enough = match &found {
                Some((_, complete)) => *complete || !spread,
                None => false,
            };
            if !enough {
                needed.push(index);
            }
            if let Some((outcome, complete)) = found {
                held.push(Update::Rule {
                    generation,
                    index,
                    outcome: Box::new(outcome),
                    complete,
                    computed: false,
                    computations: 0,
                });
            }
        }
        (held, needed)
    }

    /// Keeps the outcomes of the request out as they land.
    pub fn keep(&mut self, update: &Update) {
        let Update::Rule {
            generation,
            index,
            outcome,
            complete,
            ..
        } = update
        else {
            return;
        };
        let Some(&(full_key, nominal_key)) = self.keys.get(*index) else {
            return;
        };
        if *generation != self.current {
            return;
        }
        let key = if *complete { full_key } else { nominal_key };
        self.entries.put(key, ((**outcome).clone(), *complete));
    }
}

/// The updates of a pool of planners, each planning its share of one request, joined into what one planner would
/// send: rule counts summed over the pool, and a generation's end only once every planner has reported it.
#[derive(Debug, Default)]
pub struct PoolTally {
    /// Rules each planner computed in full so far (each counts its own).
    computed: Vec<u64>,
    /// Planners done with a generation: (generation, how many).
    finished: (u64, usize),
}

impl PoolTally {
    pub fn new(planners: usize) -> Self {
        PoolTally {
            computed: vec![0; planners],
            finished: (0, 0),
        }
    }

    /// Planner `from`'s updates as the page takes them.
    pub fn merge(&mut self, from: usize, updates: Vec<Update>) -> Vec<Update> {
        let mut out = Vec::with_capacity(updates.len());
        for mut update in updates {
            if let Update::Rule { computations, .. } | Update::Done { computations, .. } =
                &mut update
            {
                if let Some(c) = self.computed.get_mut(from) {
                    *c = *computations;
                }
                *computations = self.computed.iter().sum();
            }
            if let Update::Done { generation, .. } = update {
                self.finished = match self.finished {
                    (g, n) if g == generation => (g, n + 1),
                    _ => (generation, 1),
                };
                if self.finished.1 < self.computed.len() {
                    continue;
                }
            }
            out.push(update);
        }
        out
    }
}

/// The closed-form preview with its rows cached by [`rule_key`]: a keystroke in one rule recomputes that rule's
/// preview only (a closed form of a broadside or coupled stripline takes milliseconds, sixteen of them a frame).
#[derive(Debug, Default)]
pub struct Previewer {
    cache: RuleCache<String, RuleOutcome>,
}

impl Previewer {
    /// The same plan as `plan_with(project, &PlanOptions::preview())`.
    pub fn plan(&mut self, project: &Project) -> Result<ohmstack_core::Plan, String> {
        let options = PlanOptions::preview();
        // The plan's own rows (stack table, thickness, symmetry) without any rule: cheap, and the stack's check.
        let mut plan = crate::bridge::plan_without_rules(project)?;
        plan.rules = project
            .rules
            .iter()
            .map(|rule| {
                let key = rule_key(project, rule, &options);
                self.cache.get(&key).unwrap_or_else(|| {
                    let outcome = plan_one_rule(project, rule, &options);
                    self.cache.put(key, outcome.clone());
                    outcome
                })
            })
            .collect();
        Ok(plan)
    }
}

/// Where a rule's row on screen stands.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RowState {
    /// The closed-form preview; the field engine's figures are being computed.
    Preview,
    /// The field engine's nominal figures; the tolerance spread is being computed.
    Nominal,
    /// Everything in.
    Final,
}

/// The page's view of the field plan: the generation it asked for last, the project of that generation, and the
/// rules landed so far (with whether each is complete). Updates of any other generation are dropped.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct FieldPlan {
    pub generation: u64,
    pub project: Option<Project>,
    pub rules: Vec<Option<(RuleOutcome, bool)>>,
    /// Every rule of the generation has landed (or the request failed).
    pub done: bool,
    /// Rules the worker computed since it started (cache hits not counted).
    pub computations: u64,
    /// Why the generation could not be planned, when it could not.
    pub failure: Option<String>,
    /// The generation asks for the tolerance spread (not while typing).
    pub spread: bool,
}

impl FieldPlan {
    /// A new generation was sent for `project`: nothing of it has landed yet. When the project is the one already
    /// on screen (the spread asked for once typing paused), its landed rows stay until the new ones replace them.
    pub fn submitted(&mut self, generation: u64, project: Project, spread: bool) {
        self.generation = generation;
        if self.project.as_ref() != Some(&project) {
            self.rules = vec![None; project.rules.len()];
            self.project = Some(project);
        }
        self.done = false;
        self.failure = None;
        self.spread = spread;
    }

    /// Takes a worker update; returns false (and changes nothing) when it is for another generation.
    pub fn apply(&mut self, update: Update) -> bool {
        // Generation 0 is the worker speaking outside any request (a message it could not read).
        if update.generation() != self.generation && update.generation() != 0 {
            return false;
        }
        match update {
            Update::Rule {
                index,
                outcome,
                complete,
                computations,
                ..
            } => {
                self.computations = self.computations.max(computations);
                match self.rules.get_mut(index) {
                    Some(slot) => *slot = Some((*outcome, complete)),
                    None => return false,
                }
            }
            Update::Done { computations, .. } => {
                self.computations = self.computations.max(computations);
                self.done = true;
            }
            Update::Failed { message, .. } => {
                self.failure = Some(message);
                self.done = true;
            }
        }
        true
    }

    /// The plan to show for `project`: `preview` (the closed form, computed on the page) with every rule whose
    /// field outcome has landed replaced by it, and where each row stands. When the field plan is for another
    /// project, a rule that is the same in both on the same board keeps its landed figures (the render after a
    /// keystroke comes before the request for it), every other row is the preview's; after a failed request the
    /// preview is final (nothing is coming).
    pub fn merge(
        &self,
        project: &Project,
        preview: &ohmstack_core::Plan,
    ) -> (ohmstack_core::Plan, Vec<RowState>) {
        let mut plan = preview.clone();
        let current = self.project.as_ref() == Some(project);
        // The board without its rules, name and revision: what every rule's outcome depends on besides the rule.
        let board = |p: &Project| Project {
            title: String::new(),
            revision: String::new(),
            rules: Vec::new(),
            ..p.clone()
        };
        let unchanged: Vec<bool> = match &self.project {
            Some(old) if !current && board(old) == board(project) => project
                .rules
                .iter()
                .enumerate()
                .map(|(i, r)| old.rules.get(i) == Some(r))
                .collect(),
            _ => vec![current; project.rules.len()],
        };
        let states = plan
            .rules
            .iter_mut()
            .enumerate()
            .map(
                |(i, row)| match self.rules.get(i).and_then(|r| r.as_ref()) {
                    Some((field, complete)) if unchanged.get(i) == Some(&true) => {
                        *row = field.clone();
                        if *complete || (current && self.done && self.spread) {
                            RowState::Final
                        } else {
                            RowState::Nominal
                        }
                    }
                    _ if current && self.done => RowState::Final,
                    _ => RowState::Preview,
                },
            )
            .collect();
        (plan, states)
    }

    /// Every rule of `project` has its field figures and spread (or nothing more is coming for it).
    pub fn settled_for(&self, project: &Project) -> bool {
        self.done && self.spread && self.project.as_ref() == Some(project)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ohmstack_core::design::demo;

    fn request(generation: u64, project: &Project) -> Request {
        Request {
            generation,
            project: serde_json::to_string(project).unwrap(),
            spread: true,
            rules: None,
        }
    }

    /// Cheap options for the tests: nominal figures only (the cache and scheduling do not depend on the options).
    fn planner() -> Planner {
        Planner::new(ohmstack_core::PlanOptions::default())
    }

    fn run(planner: &mut Planner) -> Vec<Update> {
        std::iter::from_fn(|| planner.step()).collect()
    }

    #[test]
    fn every_rule_lands_nominal_then_complete_and_equals_the_whole_plan() {
        let mut p = demo::project();
        // A rule on a layer that does not exist: an error row, final at once (no spread follows).
        p.rules[1].layer = "no such layer".into();
        let mut planner = Planner::default();
        planner.request(&request(1, &p));
        let updates = run(&mut planner);
        let whole = ohmstack_core::plan_with(&p, &options()).unwrap();
        let mut seen = Vec::new();
        for u in &updates[..updates.len() - 1] {
            match u {
                Update::Rule {
                    generation: 1,
                    index,
                    outcome,
                    complete,
                    computed: true,
                    ..
                } => {
                    seen.push((*index, *complete));
                    if *complete {
                        assert_eq!(**outcome, whole.rules[*index]);
                    } else {
                        // The nominal figures: everything but the spread and the routing figures, already on the
                        // field engine's word.
                        let mut expected = whole.rules[*index].clone();
                        if let RuleOutcome::Ok(r) = &mut expected {
                            r.spread = None;
                            r.routing = None;
                            r.warnings
                                .retain(|w| !w.message.starts_with("tolerance spread"));
                        }
                        assert_eq!(**outcome, expected);
                    }
                }
                other => panic!("expected a computed rule, got {other:?}"),
            }
        }
        // Every rule's nominal figures first (the error row is final at once), then the spreads in the same order.
        let n = p.rules.len();
        let expected: Vec<(usize, bool)> = (0..n)
            .map(|i| (i, i == 1))
            .chain((0..n).filter(|&i| i != 1).map(|i| (i, true)))
            .collect();
        assert_eq!(seen, expected);
        assert!(
            matches!(updates.last(), Some(Update::Done { generation: 1, computations }) if *computations == p.rules.len() as u64)
        );
        assert!(!planner.busy() && planner.step().is_none());
        // Asked again, every complete row comes from the cache in one batch with the end.
        planner.request(&request(2, &p));
        let batch = planner.run_batch();
        assert_eq!(batch.len(), p.rules.len() + 1);
        assert!(batch[..p.rules.len()].iter().all(|u| matches!(
            u,
            Update::Rule {
                complete: true,
                computed: false,
                ..
            }
        )));
    }

    #[test]
    fn a_newer_request_between_the_nominal_figures_and_the_spread_drops_the_spread() {
        let p = demo::project();
        let mut q = p.clone();
        q.rules[0].target_ohm += 1.0;
        let mut planner = Planner::default();
        planner.request(&request(1, &p));
        assert!(matches!(
            planner.step(),
            Some(Update::Rule {
                index: 0,
                complete: false,
                ..
            })
        ));
        planner.request(&request(2, &q));
        assert!(matches!(
            planner.step(),
            Some(Update::Rule {
                generation: 2,
                index: 0,
                complete: false,
                ..
            })
        ));
    }

    #[test]
    fn an_edit_recomputes_only_the_rule_it_touched() {
        let mut p = demo::project();
        let mut planner = planner();
        planner.request(&request(1, &p));
        run(&mut planner);
        let before = planner.computations();
        p.rules[1].target_ohm += 1.0;
        p.title = "renamed".into();
        planner.request(&request(2, &p));
        let computed: Vec<usize> = run(&mut planner)
            .iter()
            .filter_map(|u| match u {
                Update::Rule {
                    index,
                    computed: true,
                    ..
                } => Some(*index),
                _ => None,
            })
            .collect();
        assert_eq!(computed, vec![1]);
        assert_eq!(planner.computations(), before + 1);
        // A change every rule depends on (the analysis frequency) recomputes all of them.
        p.analysis_freq_hz *= 2.0;
        planner.request(&request(3, &p));
        run(&mut planner);
        assert_eq!(planner.computations(), before + 1 + p.rules.len() as u64);
    }

    #[test]
    fn a_newer_request_drops_the_stale_work_and_an_older_one_is_ignored() {
        let p = demo::project();
        let mut q = p.clone();
        q.rules[0].target_ohm += 2.0;
        let mut planner = planner();
        planner.request(&request(5, &p));
        assert!(matches!(
            planner.step(),
            Some(Update::Rule {
                generation: 5,
                index: 0,
                ..
            })
        ));
        // The page sends a newer edit between two rules: the rest of generation 5 is never computed.
        planner.request(&request(6, &q));
        planner.request(&request(4, &p));
        let updates = run(&mut planner);
        assert!(updates.iter().all(|u| u.generation() == 6), "{updates:?}");
        assert_eq!(updates.len(), q.rules.len() + 1);
        assert_eq!(planner.computations(), 1 + q.rules.len() as u64);
    }

    #[test]
    fn an_unplannable_request_is_reported_as_failed() {
        let mut p = demo::project();
        p.stackup.layers.clear();
        let mut planner = planner();
        planner.request(&request(1, &p));
        match planner.step() {
            Some(Update::Failed {
                generation: 1,
                message,
            }) => assert!(!message.is_empty()),
            other => panic!("expected a failure, got {other:?}"),
        }
        planner.request(&Request {
            generation: 2,
            project: "{".into(),
            spread: true,
            rules: None,
        });
        assert!(
            matches!(planner.step(), Some(Update::Failed { generation: 2, message }) if message.contains("could not be read"))
        );
        assert!(planner.step().is_none());
    }

    #[test]
    fn the_page_keeps_only_its_latest_generation_and_merges_it_over_the_preview() {
        let p = demo::project();
        let preview = ohmstack_core::plan_with(&p, &ohmstack_core::PlanOptions::preview()).unwrap();
        let mut planner = Planner::default();
        planner.request(&request(2, &p));
        let updates = run(&mut planner);
        let mut field = FieldPlan::default();
        field.submitted(2, p.clone(), true);
        let (shown, states) = field.merge(&p, &preview);
        assert_eq!(shown, preview);
        assert!(states.iter().all(|&s| s == RowState::Preview));
        // A late update of an older generation changes nothing.
        let mut old = updates[0].clone();
        if let Update::Rule { generation, .. } = &mut old {
            *generation = 1;
        }
        assert!(!field.apply(old));
        // Rule 0's nominal field figures, then its spread.
        assert!(field.apply(updates[0].clone()));
        let (shown, states) = field.merge(&p, &preview);
        assert_eq!(states[0], RowState::Nominal);
        assert!(states[1..].iter().all(|&s| s == RowState::Preview));
        // The demo's rules are on the field engine: the landed row is the engine's, the others the preview's.
        let field_made =
            |r: &RuleOutcome| ohmstack_core::engine::is_field_method(&r.ok().unwrap().method);
        assert!(field_made(&shown.rules[0]) && !field_made(&shown.rules[1]));
        assert!(shown.rules[0].ok().unwrap().spread.is_none());
        // Every rule's nominal figures land before any spread.
        let n = p.rules.len();
        for u in updates[1..n].iter().cloned() {
            assert!(field.apply(u));
        }
        let (_, states) = field.merge(&p, &preview);
        assert!(states.iter().all(|&s| s == RowState::Nominal));
        assert!(field.apply(updates[n].clone()));
        let (shown, states) = field.merge(&p, &preview);
        assert_eq!(states[0], RowState::Final);
        assert!(shown.rules[0].ok().unwrap().spread.is_some());
        assert!(shown.rules[1].ok().unwrap().spread.is_none());
        for u in updates[n + 1..].iter().cloned() {
            assert!(!field.settled_for(&p));
            assert!(field.apply(u));
        }
        assert!(field.settled_for(&p));
        let (shown, states) = field.merge(&p, &preview);
        assert!(states.iter().all(|&s| s == RowState::Final));
        assert_eq!(shown, ohmstack_core::plan_with(&p, &options()).unwrap());
        // Another project on screen (the render after a keystroke, before its request): the edited rule shows
        // its preview, the others keep their figures; on another board nothing is merged.
        let mut q = p.clone();
        q.rules[0].target_ohm += 1.0;
        assert!(!field.settled_for(&q));
        let (shown, states) = field.merge(&q, &preview);
        assert_eq!(states[0], RowState::Preview);
        assert!(states[1..].iter().all(|&s| s == RowState::Final));
        assert_eq!(
            shown.rules[1..],
            ohmstack_core::plan_with(&p, &options()).unwrap().rules[1..]
        );
        q.fab.etch_factor = Some(q.fab.etch_factor.unwrap_or(2.0) + 1.0);
        assert!(field
            .merge(&q, &preview)
            .1
            .iter()
            .all(|&s| s == RowState::Preview));
    }

    #[test]
    fn while_typing_only_nominal_figures_are_asked_and_the_spread_follows_the_pause() {
        // Issue 17: a transient value never feeds the spread. The page asks without it while typing, then asks
        // again with it for the same project once typing pauses; the nominal figures are not computed twice.
        let mut p = demo::project();
        p.rules.truncate(2);
        let mut planner = Planner::default();
        let typing = Request {
            spread: false,
            ..request(1, &p)
        };
        planner.request(&typing);
        let updates = run(&mut planner);
        assert_eq!(updates.len(), p.rules.len() + 1);
        for u in &updates[..p.rules.len()] {
            match u {
                Update::Rule {
                    outcome,
                    complete: false,
                    computed: true,
                    ..
                } => assert!(outcome.ok().unwrap().spread.is_none()),
                other => panic!("expected nominal figures, got {other:?}"),
            }
        }
        // Nominal figures alone are not counted as rules computed in full.
        assert_eq!(planner.computations(), 0);
        let mut field = FieldPlan::default();
        field.submitted(1, p.clone(), false);
        for u in updates {
            assert!(field.apply(u));
        }
        let preview = ohmstack_core::plan_with(&p, &ohmstack_core::PlanOptions::preview()).unwrap();
        assert!(field
            .merge(&p, &preview)
            .1
            .iter()
            .all(|&s| s == RowState::Nominal));
        assert!(!field.settled_for(&p), "no spread yet");
        // The pause: the same project with the spread. Rows already landed stay on screen meanwhile.
        field.submitted(2, p.clone(), true);
        assert!(field
            .merge(&p, &preview)
            .1
            .iter()
            .all(|&s| s == RowState::Nominal));
        planner.request(&request(2, &p));
        let batch = planner.run_batch();
        // The cached nominal figures travel with the first spread computed.
        assert!(matches!(
            batch[..],
            [
                Update::Rule {
                    index: 0,
                    computed: false,
                    complete: false,
                    ..
                },
                Update::Rule {
                    index: 1,
                    computed: false,
                    complete: false,
                    ..
                },
                Update::Rule {
                    index: 0,
                    computed: true,
                    complete: true,
                    ..
                }
            ]
        ));
        for u in batch.into_iter().chain(run(&mut planner)) {
            assert!(field.apply(u));
        }
        assert!(field.settled_for(&p));
        let (shown, states) = field.merge(&p, &preview);
        assert!(states.iter().all(|&s| s == RowState::Final));
        let whole = ohmstack_core::plan_with(&p, &options()).unwrap();
        assert_eq!(shown.rules, whole.rules);
        assert_eq!(planner.computations(), p.rules.len() as u64);
    }

    #[test]
    fn cache_hits_travel_with_the_next_computed_rule() {
        let mut p = demo::project();
        let mut planner = planner();
        planner.request(&request(1, &p));
        // Nothing cached: one rule a batch, then the end.
        let mut sizes = Vec::new();
        while planner.busy() {
            sizes.push(planner.run_batch().len());
        }
        assert_eq!(sizes, [vec![1; p.rules.len()], vec![1]].concat());
        // Only the last rule changed: every row before it comes in the batch that carries it, then the end.
        let last = p.rules.len() - 1;
        p.rules[last].target_ohm += 1.0;
        planner.request(&request(2, &p));
        let batch = planner.run_batch();
        assert_eq!(batch.len(), p.rules.len());
        assert!(
            matches!(batch.last(), Some(Update::Rule { computed: true, index, .. }) if *index == last)
        );
        assert!(matches!(
            planner.run_batch()[..],
            [Update::Done { generation: 2, .. }]
        ));
        assert!(planner.run_batch().is_empty());
    }

    #[test]
    fn the_cached_preview_is_the_preview_plan() {
        let mut p = demo::project();
        let mut previewer = Previewer::default();
        let options = ohmstack_core::PlanOptions::preview();
        for step in 0..3 {
            let i = step % p.rules.len();
            p.rules[i].target_ohm += 0.5;
            p.title = format!("step {step}");
            let whole = ohmstack_core::plan_with(&p, &options).unwrap();
            assert_eq!(previewer.plan(&p).unwrap(), whole);
        }
        p.stackup.layers.clear();
        assert!(previewer.plan(&p).is_err());
    }

    #[test]
    fn the_key_follows_what_a_rule_depends_on() {
        let p = demo::project();
        let o = options();
        let key = |p: &Project| rule_key(p, &p.rules[0], &o);
        let k = key(&p);
        let mut q = p.clone();
        q.title = "other".into();
        q.rules[1].width_m *= 2.0;
        assert_eq!(key(&q), k, "title and other rules are not part of it");
        for change in [
            |q: &mut Project| q.rules[0].tolerance_pct += 1.0,
            |q: &mut Project| q.rules[0].name.push('x'),
            |q: &mut Project| q.analysis_freq_hz += 1.0,
            |q: &mut Project| q.fab = Default::default(),
            |q: &mut Project| q.process = Some(Default::default()),
        ] {
            let mut q = p.clone();
            change(&mut q);
            if q != p {
                assert_ne!(key(&q), k, "{q:?}");
            }
        }
        assert_ne!(
            rule_key(&p, &p.rules[0], &ohmstack_core::PlanOptions::default()),
            k
        );
    }

    #[test]
    fn shared_planners_cover_every_rule_once_and_keep_their_rules_through_an_edit() {
        let fixture: Project = serde_json::from_str(include_str!(
            "../../tests/fixtures/twelve_layer_sixteen_rules.json"
        ))
        .unwrap();
        for project in [demo::project(), fixture] {
            let shares = share_rules(&project, 2);
            let mut all: Vec<usize> = shares.concat();
            all.sort_unstable();
            assert_eq!(all, (0..project.rules.len()).collect::<Vec<_>>());
            // Balanced within the heaviest single rule (the bound of the greedy rule).
            let load = |share: &Vec<usize>| -> u32 {
                share.iter().map(|&i| work_of(&project.rules[i])).sum()
            };
            let heaviest = project.rules.iter().map(work_of).max().unwrap();
            assert!(
                load(&shares[0]).abs_diff(load(&shares[1])) <= heaviest,
                "{shares:?}"
            );
            // An edit of a value keeps every rule on its planner (and its cache).
            let mut edited = project.clone();
            edited.rules[0].target_ohm += 3.0;
            edited.rules[0].width_m *= 1.5;
            assert_eq!(share_rules(&edited, 2), shares);
            assert_eq!(share_rules(&project, 1), vec![all.clone()]);
            assert_eq!(share_rules(&project, 0), vec![all]);
        }
    }

    #[test]
    fn two_shared_planners_together_give_the_whole_plan() {
        let p = demo::project();
        let options = ohmstack_core::PlanOptions::default();
        let whole = ohmstack_core::plan_with(&p, &options).unwrap();
        let mut landed = vec![None; p.rules.len()];
        let mut tally = PoolTally::new(2);
        let mut field = FieldPlan::default();
        field.submitted(1, p.clone(), false);
        for (k, share) in share_rules(&p, 2).into_iter().enumerate() {
            let mut planner = planner();
            planner.request(&Request {
                rules: Some(share.clone()),
                ..request(1, &p)
            });
            let updates = run(&mut planner);
            assert!(matches!(
                updates.last(),
                Some(Update::Done { generation: 1, .. })
            ));
            for u in &updates {
                if let Update::Rule { index, outcome, .. } = u {
                    assert!(share.contains(index), "rule {index} is not in {share:?}");
                    assert!(
                        landed[*index].replace(*outcome.clone()).is_none(),
                        "rule {index} twice"
                    );
                }
            }
            // The page sees the generation end only when the second planner ends it, with both counts.
            let joined = tally.merge(k, updates);
            assert_eq!(
                joined
                    .iter()
                    .filter(|u| matches!(u, Update::Done { .. }))
                    .count(),
                k
            );
            for u in joined {
                assert!(field.apply(u));
            }
            assert_eq!(field.done, k == 1);
        }
        assert_eq!(field.computations, p.rules.len() as u64);
        let landed: Vec<RuleOutcome> = landed.into_iter().map(Option::unwrap).collect();
        assert_eq!(landed, whole.rules);
    }

    #[test]
    fn the_page_asks_only_for_the_rules_whose_outcome_it_does_not_hold() {
        let mut p = demo::project();
        p.rules.truncate(3);
        let mut planner = Planner::default();
        let mut landed = Landed::default();
        let mut ask = |landed: &mut Landed, generation: u64, p: &Project, spread: bool| {
            let (held, needed) = landed.prepare(generation, p, spread);
            planner.request(&Request {
                rules: Some(needed.clone()),
                spread,
                ..request(generation, p)
            });
            let updates = run(&mut planner);
            updates.iter().for_each(|u| landed.keep(u));
            (held, needed, updates)
        };
        let (held, needed, first) = ask(&mut landed, 1, &p, true);
        assert!(held.is_empty());
        assert_eq!(needed, vec![0, 1, 2]);
        // The same project again: everything is held, complete, and equal to what the planner sent.
        let (held, needed, _) = ask(&mut landed, 2, &p, true);
        assert!(needed.is_empty());
        let complete_of = |updates: &[Update], index: usize| {
            updates.iter().find_map(|u| match u {
                Update::Rule {
                    index: i,
                    outcome,
                    complete: true,
                    ..
                } if *i == index => Some(outcome.clone()),
                _ => None,
            })
        };
        for i in 0..3 {
            assert_eq!(complete_of(&held, i), complete_of(&first, i), "rule {i}");
        }
        // Typing into rule 1: only rule 1 goes out, for its nominal figures; the others stay on screen complete.
        let mut typed = p.clone();
        typed.rules[1].target_ohm += 1.0;
        let (held, needed, updates) = ask(&mut landed, 3, &typed, false);
        assert_eq!(needed, vec![1]);
        assert_eq!(held.len(), 2);
        assert!(held
            .iter()
            .all(|u| matches!(u, Update::Rule { complete: true, .. })));
        assert!(matches!(
            updates[..],
            [
                Update::Rule {
                    index: 1,
                    complete: false,
                    computed: true,
                    ..
                },
                Update::Done { .. }
            ]
        ));
        // The pause: rule 1's nominal figures are held (shown at once), its spread is still asked for.
        let (held, needed, _) = ask(&mut landed, 4, &typed, true);
        assert_eq!(needed, vec![1]);
        assert!(held.iter().any(|u| matches!(
            u,
            Update::Rule {
                index: 1,
                complete: false,
                ..
            }
        )));
        // Undoing the edit needs nothing from the planner.
        let (held, needed, _) = ask(&mut landed, 5, &p, true);
        assert!(needed.is_empty() && held.len() == 3);
        // An outcome of an older generation landing late is not kept under the current keys.
        let mut other = p.clone();
        other.rules[0].target_ohm += 2.0;
        let stale = Update::Rule {
            generation: 5,
            index: 0,
            outcome: Box::new(RuleOutcome::Error {
                name: "stale".into(),
                message: "stale".into(),
            }),
            complete: true,
            computed: true,
            computations: 0,
        };
        landed.prepare(6, &other, true);
        landed.keep(&stale);
        assert_eq!(landed.prepare(7, &other, true).1, vec![0]);
    }

    #[test]
    fn a_proposal_travels_as_text_and_comes_back_as_a_project() {
        // What the proposal worker answers for the demo: either a project that reads back with every core and
        // prepreg built from glass, or the core's reason; a message it cannot read says so.
        let demo = ohmstack_core::design::demo::project();
        let request = ProposalRequest {
            project: serde_json::to_string(&demo).unwrap(),
            target_thickness_m: Some(1.6e-3),
        };
        let text = serde_json::to_string(&request).unwrap();
        let reply = run_proposal(&serde_json::from_str(&text).unwrap());
        match (&reply.project, &reply.error) {
            (Some(p), None) => {
                let p = Project::from_json(p).unwrap();
                assert!(p.stackup.layers.iter().all(|l| match l {
                    ohmstack_core::design::stackup::Layer::Core(d)
                    | ohmstack_core::design::stackup::Layer::Prepreg(d) => d.construction.is_some(),
                    _ => true,
                }));
            }
            (None, Some(e)) => assert!(e.contains("mirror"), "{e}"),
            other => panic!("{other:?}"),
        }
        let bad = run_proposal(&ProposalRequest {
            project: "{".into(),
            target_thickness_m: None,
        });
        assert!(bad.error.unwrap().contains("cannot read"));
    }
}
