//! Explaining what moved: the edits between the mechanism a baseline was recorded on and
//! the mechanism of today, each taken back alone, and every moved observable attributed to
//! them by how much of its move each accounts for.

use crate::baseline::{Baseline, InputRole};
use crate::case::PreparedCase;
use crate::error::SuiteError;
use crate::file::Tolerance;
use crate::hash::sha256_hex;
use crate::regress::{Status, Verification};
use rayon::prelude::*;
use std::path::Path;
use std::process::Command;
use std::sync::Arc;
use std::time::Instant;
use stoik_diff::{diff_mechanisms, load_mechanism_source, revert, DiffOptions, MechanismSource};
use stoik_mechanism::{Diagnostics, MechanismFile};

/// The edits of one case "interact" when the parts they account for, added, differ from the
/// whole move by more than this fraction of it.
pub const INTERACTION_THRESHOLD: f64 = 0.1;

/// How many commits touching a mechanism file [`explain`] searches for the version a
/// baseline was recorded on.
pub const GIT_SEARCH_LIMIT: usize = 500;

/// The scale on which moves are measured and added.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MoveScale {
    /// ln(value): for observables with a factor tolerance whose values are all positive
    /// (rate-driven quantities, whose responses multiply).
    Log,
    /// The value itself, in its SI unit.
    Linear,
}

/// One edit's share of one observable's move.
#[derive(Debug, Clone, PartialEq)]
pub struct EditShare {
    /// The edit, in words (`step changed: H + O2 <=> O + OH`).
    pub edit: String,
    /// The observable's value with only this edit taken back, SI unit; `Err` when that run
    /// gave no value (the reason).
    pub reverted_value: Result<f64, String>,
    /// The part of the move this edit accounts for: (g(new) - g(reverted)) / (g(new) -
    /// g(old)), g the [`MoveScale`]. 1 when it alone makes the whole move.
    pub share: Option<f64>,
}

/// One moved observable, attributed.
#[derive(Debug, Clone, PartialEq)]
pub struct ObservableExplanation {
    /// The case.
    pub case: String,
    /// The observable.
    pub observable: String,
    /// Its SI unit.
    pub unit: &'static str,
    /// The baseline value.
    pub baseline: f64,
    /// The value on the new mechanism.
    pub new: f64,
    /// The value on the old mechanism, run now (every edit taken back): the move explained
    /// is from it to `new`. `Err` when that run gave no value.
    pub old_run: Result<f64, String>,
    /// Whether the old mechanism, run now, reproduces the baseline within the observable's
    /// tolerance; `false` means something besides the mechanism (the scenario, stoik, the
    /// thermo files) moved it too.
    pub old_run_reproduces_baseline: bool,
    /// The scale of the shares.
    pub scale: MoveScale,
    /// Every edit with its share, largest |share| first.
    pub shares: Vec<EditShare>,
    /// The sum of the shares (1 when the edits act independently and additively).
    pub sum_of_shares: Option<f64>,
    /// Whether the edits interact: `|sum_of_shares - 1| > INTERACTION_THRESHOLD`.
    pub interacting: bool,
}

/// Why some case could not be explained.
#[derive(Debug, Clone, PartialEq)]
pub struct Unexplained {
    /// The case.
    pub case: String,
    /// The reason.
    pub reason: String,
}

/// What [`explain`] found, and what it cost.
#[derive(Debug, Clone, PartialEq)]
pub struct Explanation {
    /// Where the old mechanism of each explained mechanism file came from (`REV:path` or a
    /// file), as (mechanism path relative to the suite, source).
    pub old_mechanisms: Vec<(String, String)>,
    /// Edits that cannot be taken back alone (a species added that steps use...), with the
    /// reason; they are not ranked.
    pub not_revertible: Vec<(String, String)>,
    /// Every moved observable of an explained case.
    pub observables: Vec<ObservableExplanation>,
    /// Cases with moved observables that could not be explained.
    pub unexplained: Vec<Unexplained>,
    /// Extra runs made.
    pub extra_runs: usize,
    /// Wall-clock time of those runs (and of reading the old mechanism), s.
    pub seconds: f64,
}

/// Where to find the mechanism a baseline was recorded on.
#[derive(Debug, Clone, PartialEq)]
pub enum OldMechanism {
    /// Search the git history of each mechanism file (run in the suite's folder, at most
    /// [`GIT_SEARCH_LIMIT`] commits) for the version whose SHA-256 the baseline records.
    FromHistory,
    /// This mechanism (a file, or `REV:path` relative to the suite's folder), for every case.
    Given(MechanismSource),
}

/// `git` in `dir` with `args`: stdout, or why not.
fn git(dir: &Path, args: &[&str]) -> Result<Vec<u8>, String> {
    let dir = if dir.as_os_str().is_empty() {
        Path::new(".")
    } else {
        dir
    };
    let out = Command::new("git")
        .args(args)
        .current_dir(dir)
        .output()
        .map_err(|e| format!("cannot run `git`: {e}"))?;
    if !out.status.success() {
        let stderr = String::from_utf8_lossy(&out.stderr);
        let first = stderr.lines().find(|l| !l.trim().is_empty()).unwrap_or("");
        return Err(format!("`git {}` failed: {}", args.join(" "), first.trim()));
    }
    Ok(out.stdout)
}

/// The git path (relative to the working folder `folder`) of a path relative to it.
fn git_path(relative: &str) -> Option<String> {
    if Path::new(relative).is_absolute() {
        return None;
    }
    Some(
        if relative.starts_with("../") || relative.starts_with("./") {
            relative.to_string()
        } else {
            format!("./{relative}")
        },
    )
}

/// The commit whose version of `relative` (a path from `folder`) has SHA-256 `sha256`.
fn find_in_history(folder: &Path, relative: &str, sha256: &str) -> Result<String, String> {
    let path = git_path(relative).ok_or_else(|| {
        format!("`{relative}` is an absolute path; give the old mechanism with --explain-against")
    })?;
    let limit = format!("-n{GIT_SEARCH_LIMIT}");
    let log = git(folder, &["log", "--format=%H", &limit, "--", &path])?;
    let log = String::from_utf8_lossy(&log);
    for commit in log.lines().map(str::trim).filter(|l| !l.is_empty()) {
        let Ok(bytes) = git(folder, &["show", &format!("{commit}:{path}")]) else {
            continue;
        };
        if sha256_hex(&bytes) == sha256 {
            return Ok(commit.to_string());
        }
    }
    Err(format!(
        "no commit among the last {GIT_SEARCH_LIMIT} that touch `{relative}` holds the version the baseline was recorded on (SHA-256 {}...); give the old mechanism with --explain-against",
        &sha256[..sha256.len().min(12)]
    ))
}

fn scale_of(tolerance: &Tolerance, values: &[f64]) -> MoveScale {
    if matches!(tolerance, Tolerance::Factor(_)) && values.iter().all(|v| *v > 0.0) {
        MoveScale::Log
    } else {
        MoveScale::Linear
    }
}

fn on_scale(scale: MoveScale, v: f64) -> f64 {
    match scale {
        MoveScale::Log => v.ln(),
        MoveScale::Linear => v,
    }
}

/// Attributes every observable that moved in `verification` to the edits between the
/// mechanism its case was recorded on and the mechanism it runs on now.
///
/// For each mechanism file of a case with a moved observable, the old version is read
/// (`old`), the two are diffed ([`stoik_diff::diff_mechanisms`], default options) and each
/// edit is taken back alone ([`stoik_diff::revert`]). Each such case then runs once on the
/// old mechanism and once per edit (in parallel): `extra_runs` in the result counts them.
/// Cases whose mechanism file is unchanged, or whose old version cannot be found, are listed
/// in `unexplained` with the reason.
///
/// `prepared` and `verification` are those [`crate::verify_prepared`] was given and
/// returned; `baseline` the baseline it compared with.
pub fn explain(
    suite_folder: &Path,
    prepared: &[PreparedCase],
    baseline: &Baseline,
    verification: &Verification,
    old: &OldMechanism,
) -> Result<Explanation, SuiteError> {
    let start = Instant::now();
    let mut out = Explanation {
        old_mechanisms: Vec::new(),
        not_revertible: Vec::new(),
        observables: Vec::new(),
        unexplained: Vec::new(),
        extra_runs: 0,
        seconds: 0.0,
    };
    // The cases with a moved observable, grouped by mechanism file (recorded path and hash).
    struct Group {
        path: String,
        recorded_sha256: String,
        cases: Vec<usize>,
    }
    let mut groups: Vec<Group> = Vec::new();
    for (i, p) in prepared.iter().enumerate() {
        let name = &p.case().name;
        let Some(result) = verification.cases.iter().find(|c| &c.name == name) else {
            continue;
        };
        if !result.observables.iter().any(|o| o.status == Status::Moved) {
            continue;
        }
        let recorded = baseline
            .case(name)
            .and_then(|b| b.input(InputRole::Mechanism));
        let now = p.inputs().iter().find(|f| f.role == InputRole::Mechanism);
        let (Some(recorded), Some(now)) = (recorded, now) else {
            out.unexplained.push(Unexplained {
                case: name.clone(),
                reason: "the baseline records no mechanism for this case".into(),
            });
            continue;
        };
        if recorded.sha256 == now.sha256 && matches!(old, OldMechanism::FromHistory) {
            out.unexplained.push(Unexplained {
                case: name.clone(),
                reason: format!(
                    "the mechanism `{}` is unchanged since the baseline: the move comes from elsewhere (scenario, thermo files, stoik)",
                    now.path
                ),
            });
            continue;
        }
        match groups
            .iter_mut()
            .find(|g| g.path == now.path && g.recorded_sha256 == recorded.sha256)
        {
            Some(g) => g.cases.push(i),
            None => groups.push(Group {
                path: now.path.clone(),
                recorded_sha256: recorded.sha256.clone(),
                cases: vec![i],
            }),
        }
    }

    // One job per (case, mechanism variant): variant None is the whole old mechanism.
    struct Job {
        case: usize,
        edit: Option<usize>,
        group: usize,
    }
    struct Variants {
        old: Arc<MechanismFile>,
        edits: Vec<(String, Arc<MechanismFile>)>,
    }
    let mut variants: Vec<Option<Variants>> = Vec::new();
    let mut jobs = Vec::new();
    for (gi, g) in groups.iter().enumerate() {
        let fail = |out: &mut Explanation, reason: String| {
            for &c in &g.cases {
                out.unexplained.push(Unexplained {
                    case: prepared[c].case().name.clone(),
                    reason: reason.clone(),
                });
            }
        };
        let source = match old {
            OldMechanism::Given(s) => s.clone(),
            OldMechanism::FromHistory => {
                match find_in_history(suite_folder, &g.path, &g.recorded_sha256) {
                    Ok(commit) => MechanismSource::Git {
                        revision: commit,
                        path: git_path(&g.path).unwrap_or_default(),
                    },
                    Err(reason) => {
                        fail(&mut out, reason);
                        variants.push(None);
                        continue;
                    }
                }
            }
        };
        let old_file = match load_mechanism_source(&source, suite_folder) {
            Ok(f) => f,
            Err(e) => {
                fail(
                    &mut out,
                    format!("cannot read the old mechanism {}: {e}", source.label()),
                );
                variants.push(None);
                continue;
            }
        };
        out.old_mechanisms.push((g.path.clone(), source.label()));
        let new_file = prepared[g.cases[0]].plan().mechanism_file();
        let diff = match diff_mechanisms(
            &old_file.mechanism,
            &new_file.mechanism,
            &DiffOptions::default(),
        ) {
            Ok(d) => d,
            Err(e) => {
                fail(&mut out, format!("cannot diff the mechanisms: {e}"));
                variants.push(None);
                continue;
            }
        };
        let mut edits = Vec::new();
        for edit in &diff.edits {
            match revert(&old_file.mechanism, &new_file.mechanism, edit) {
                Ok(m) => edits.push((
                    edit.describe(),
                    Arc::new(MechanismFile {
                        mechanism: m,
                        warnings: Diagnostics::default(),
                        thermo_files: new_file.thermo_files.clone(),
                    }),
                )),
                Err(e) => out.not_revertible.push((edit.describe(), e.to_string())),
            }
        }
        for &c in &g.cases {
            jobs.push(Job {
                case: c,
                edit: None,
                group: gi,
            });
            for k in 0..edits.len() {
                jobs.push(Job {
                    case: c,
                    edit: Some(k),
                    group: gi,
                });
            }
        }
        variants.push(Some(Variants {
            old: Arc::new(old_file),
            edits,
        }));
    }

    out.extra_runs = jobs.len();
    let results: Vec<Result<Vec<Result<f64, String>>, String>> = jobs
        .par_iter()
        .map(|job| {
            let Some(v) = &variants[job.group] else {
                return Err("no old mechanism".to_string());
            };
            let mechanism = match job.edit {
                None => v.old.clone(),
                Some(k) => v.edits[k].1.clone(),
            };
            let case = prepared[job.case]
                .with_mechanism(mechanism)
                .map_err(|e| format!("the case does not run on this mechanism: {e}"))?;
            let values = case.run(None)?;
            Ok(values.values)
        })
        .collect();

    for (gi, g) in groups.iter().enumerate() {
        let Some(v) = &variants[gi] else { continue };
        for &c in &g.cases {
            let p = &prepared[c];
            let Some(result) = verification.cases.iter().find(|r| r.name == p.case().name) else {
                continue;
            };
            let of = |edit: Option<usize>| {
                jobs.iter()
                    .position(|j| j.case == c && j.edit == edit)
                    .map(|i| &results[i])
            };
            let old_values = of(None);
            for (oi, o) in result.observables.iter().enumerate() {
                if o.status != Status::Moved {
                    continue;
                }
                let (Some(base), Some(new)) = (o.baseline, o.new) else {
                    continue;
                };
                let value = |r: Option<&Result<Vec<Result<f64, String>>, String>>| match r {
                    Some(Ok(values)) => values
                        .get(oi)
                        .cloned()
                        .unwrap_or_else(|| Err("no such observable".into())),
                    Some(Err(e)) => Err(e.clone()),
                    None => Err("not run".into()),
                };
                let old_run = value(old_values);
                let reverted: Vec<(String, Result<f64, String>)> = v
                    .edits
                    .iter()
                    .enumerate()
                    .map(|(k, (name, _))| (name.clone(), value(of(Some(k)))))
                    .collect();
                let mut all = vec![new];
                all.extend(old_run.iter().copied());
                all.extend(
                    reverted
                        .iter()
                        .filter_map(|(_, r)| r.as_ref().ok().copied()),
                );
                let scale = scale_of(&o.tolerance, &all);
                let total = old_run
                    .as_ref()
                    .ok()
                    .map(|&old| on_scale(scale, new) - on_scale(scale, old))
                    .filter(|t| *t != 0.0 && t.is_finite());
                let mut shares: Vec<EditShare> = reverted
                    .into_iter()
                    .map(|(edit, r)| {
                        let share = match (&r, total) {
                            (Ok(x), Some(t)) => {
                                Some((on_scale(scale, new) - on_scale(scale, *x)) / t)
                            }
                            _ => None,
                        }
                        .filter(|s| s.is_finite());
                        EditShare {
                            edit,
                            reverted_value: r,
                            share,
                        }
                    })
                    .collect();
                shares.sort_by(|a, b| {
                    let key = |s: &EditShare| s.share.map_or(-1.0, f64::abs);
                    key(b).total_cmp(&key(a))
                });
                let sum_of_shares = if shares.iter().all(|s| s.share.is_some()) && total.is_some() {
                    Some(shares.iter().filter_map(|s| s.share).sum::<f64>())
                } else {
                    None
                };
                out.observables.push(ObservableExplanation {
                    case: o.case.clone(),
                    observable: o.name.clone(),
                    unit: o.unit,
                    baseline: base,
                    new,
                    old_run_reproduces_baseline: old_run
                        .as_ref()
                        .is_ok_and(|&x| o.tolerance.holds(base, x)),
                    old_run,
                    scale,
                    interacting: sum_of_shares
                        .is_some_and(|s| (s - 1.0).abs() > INTERACTION_THRESHOLD),
                    sum_of_shares,
                    shares,
                });
            }
        }
    }
    out.seconds = start.elapsed().as_secs_f64();
    Ok(out)
}

/// Shares smaller than this (in magnitude) are left out of a line of the report.
const REPORT_MIN_SHARE: f64 = 0.005;
/// At most this many edits are named on a line of the report.
const REPORT_MAX_EDITS: usize = 3;

fn percent(x: f64) -> String {
    // `+ 0.0` turns a negative zero into zero.
    format!("{:.1} %", 100.0 * x + 0.0)
}

/// The explanation for people: the edits ranked over every moved observable (how often each
/// makes the largest share, and its largest share), then one line per moved observable with
/// the old and new values, the main shares and their sum (flagging interaction); then the
/// cost.
pub fn explanation_report(e: &Explanation) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    for (path, source) in &e.old_mechanisms {
        let _ = writeln!(
            s,
            "explain: `{path}` compared with its recorded version, {source}"
        );
    }
    for (edit, reason) in &e.not_revertible {
        let _ = writeln!(
            s,
            "explain: not ranked (cannot be taken back alone): {edit}: {reason}"
        );
    }
    // Edits ranked: (name, moves where it is the largest share, largest |share|).
    let mut ranking: Vec<(String, usize, f64)> = Vec::new();
    for o in &e.observables {
        for (k, share) in o.shares.iter().enumerate() {
            let entry = match ranking.iter_mut().find(|r| r.0 == share.edit) {
                Some(r) => r,
                None => {
                    ranking.push((share.edit.clone(), 0, 0.0));
                    ranking.last_mut().expect("just pushed")
                }
            };
            if let Some(x) = share.share {
                entry.2 = entry.2.max(x.abs());
                if k == 0 {
                    entry.1 += 1;
                }
            }
        }
    }
    ranking.sort_by(|a, b| b.1.cmp(&a.1).then(b.2.total_cmp(&a.2)));
    if !ranking.is_empty() {
        let _ = writeln!(
            s,
            "explain: {} edit(s) ranked over {} moved observable(s):",
            ranking.len(),
            e.observables.len()
        );
        for (i, (edit, first, largest)) in ranking.iter().enumerate() {
            let _ = writeln!(
                s,
                "  {}. {edit}: the largest share in {first} of {} move(s), up to {}",
                i + 1,
                e.observables.len(),
                percent(*largest)
            );
        }
        let _ = writeln!(
            s,
            "explain: each move by edit, as the part of (new - old) the edit accounts for (log space for factor tolerances):"
        );
    }
    for o in &e.observables {
        let old = match &o.old_run {
            Ok(v) => format!("{v:.6e}"),
            Err(r) => format!("no value ({r})"),
        };
        let mut parts: Vec<String> = o
            .shares
            .iter()
            .filter(|x| x.share.is_some_and(|v| v.abs() >= REPORT_MIN_SHARE))
            .take(REPORT_MAX_EDITS)
            .map(|x| format!("{} {}", x.edit, percent(x.share.unwrap_or(0.0))))
            .collect();
        let shown = parts.len();
        let rest = o.shares.len() - shown;
        if rest > 0 {
            parts.push(format!("{rest} smaller"));
        }
        let sum = match o.sum_of_shares {
            Some(x) if o.interacting => format!("sum {}: the edits interact", percent(x)),
            Some(x) => format!("sum {}", percent(x)),
            None => "sum -: some run gave no value".to_string(),
        };
        let _ = writeln!(
            s,
            "  {} / {}: {old} -> {:.6e} {}: {}; {sum}",
            o.case,
            o.observable,
            o.new,
            o.unit,
            parts.join(", ")
        );
        if !o.old_run_reproduces_baseline {
            let _ = writeln!(
                s,
                "    note: the old mechanism run now gives {old}, not the baseline {:.6e}: something besides the mechanism moved this value too",
                o.baseline
            );
        }
        for x in o.shares.iter().filter(|x| x.reverted_value.is_err()) {
            if let Err(r) = &x.reverted_value {
                let _ = writeln!(s, "    with `{}` taken back: no value: {r}", x.edit);
            }
        }
    }
    for u in &e.unexplained {
        let _ = writeln!(s, "explain: case `{}` not explained: {}", u.case, u.reason);
    }
    let _ = writeln!(
        s,
        "explain: {} extra run(s) in {:.2} s",
        e.extra_runs, e.seconds
    );
    s
}
