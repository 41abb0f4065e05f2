//! The report's gallery: for each product and detector, the worst missed events and the worst
//! false alarms of the test trials, each drawn as its explanation picture.

use crate::key::{trial_key_text, TrialRef};
use crate::replay::{replay, resolve_detector, ReplayDetector};
use crate::{explain_replayed, operating_index, ExplainRun};
use echobench_core::detector::DetectorPlugin;
use echobench_harness::runner::Tallies;
use echobench_harness::summary::rate_label;
use echobench_report::Section;
use echobench_svg::escape;
use rayon::prelude::*;
use std::fmt::Write as _;
use std::sync::Arc;

/// Most pictures in a report's gallery. A picture is about 50 kB of SVG on average (its
/// spectrogram a compressed raster of at most 240 × 64 cells, shared by the pictures of the
/// same trial): the default suite's gallery of 37 pictures adds 1.8 MB to the report, and the
/// bound keeps any gallery near 2 MB. Past it fewer trials per detector are shown, and the
/// section says how many were left out.
pub const MAX_GALLERY_PICTURES: usize = 40;

/// Trials of each kind (missed, false alarms) per detector in the report's gallery.
pub const GALLERY_PER_DETECTOR: usize = 2;

/// Why a trial is in the gallery.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PickKind {
    /// Events were missed in it.
    Missed,
    /// False alarms were raised in it.
    FalseAlarms,
}

/// One trial chosen for the gallery.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct GalleryPick {
    /// The product.
    pub product: String,
    /// Detector label.
    pub detector: String,
    /// Why it was chosen.
    pub kind: PickKind,
    /// Scene id.
    pub scene: String,
    /// Sweep point index of the variant.
    pub sweep_point: u64,
    /// Swept value as written.
    pub sweep_value: Option<String>,
    /// Trial index.
    pub trial: u64,
    /// Events in the trial.
    pub events: u32,
    /// Of those, detected.
    pub detected: u32,
    /// False alarms in the trial.
    pub false_alarms: u32,
}

impl GalleryPick {
    /// The trial's key, `SCENE[@SWEEP]/TRIAL`.
    pub fn key(&self) -> String {
        trial_key_text(&self.scene, self.sweep_value.as_deref(), self.trial, false)
    }
}

/// The gallery's trials and what the bound left out.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct GallerySelection {
    /// Chosen trials: product by product, detector by detector (tally order), misses first.
    pub picks: Vec<GalleryPick>,
    /// Trials of each kind shown per detector after applying the bound.
    pub per_detector: usize,
    /// Trials that qualified but were left out to keep within [`MAX_GALLERY_PICTURES`].
    pub left_out: usize,
}

/// Chooses the gallery from the tallies, at each detector's first operating point: per
/// product and detector, the `per_detector` target trials with the most missed events
/// (`detected < events`), then the `per_detector` trials with the most false alarms; ties go
/// to the earlier scene variant in suite order, then the lower trial index. When that makes
/// more than [`MAX_GALLERY_PICTURES`], fewer per detector are taken (at least one of each
/// kind), and past that the last detectors' trials are left out.
pub fn select_gallery(tallies: &Tallies, per_detector: usize) -> GallerySelection {
    // Candidates per (product, detector): (kind, sort key, pick).
    let mut groups: Vec<(Vec<GalleryPick>, Vec<GalleryPick>)> = Vec::new();
    for tally in &tallies.detectors {
        let mut missed = Vec::new();
        let mut alarmed = Vec::new();
        for (order, v) in tally.variants.iter().enumerate() {
            let Some(point) = v.operating.first() else {
                continue;
            };
            for t in &point.trials {
                let pick = |kind| {
                    (
                        order,
                        GalleryPick {
                            product: tally.product.clone(),
                            detector: tally.label.clone(),
                            kind,
                            scene: v.scene.clone(),
                            sweep_point: v.sweep_point,
                            sweep_value: v.sweep_value.clone(),
                            trial: t.trial,
                            events: t.events,
                            detected: t.detected,
                            false_alarms: t.false_alarms,
                        },
                    )
                };
                if v.label == "target" && t.detected < t.events {
                    missed.push(pick(PickKind::Missed));
                }
                if t.false_alarms > 0 {
                    alarmed.push(pick(PickKind::FalseAlarms));
                }
            }
        }
        missed.sort_by(|a, b| {
            (b.1.events - b.1.detected)
                .cmp(&(a.1.events - a.1.detected))
                .then(a.0.cmp(&b.0))
                .then(a.1.trial.cmp(&b.1.trial))
        });
        alarmed.sort_by(|a, b| {
            b.1.false_alarms
                .cmp(&a.1.false_alarms)
                .then(a.0.cmp(&b.0))
                .then(a.1.trial.cmp(&b.1.trial))
        });
        groups.push((
            missed.into_iter().map(|(_, p)| p).collect(),
            alarmed.into_iter().map(|(_, p)| p).collect(),
        ));
    }
    let count = |k: usize| -> usize {
        groups
            .iter()
            .map(|(m, a)| m.len().min(k) + a.len().min(k))
            .sum()
    };
    let qualified = count(per_detector);
    let mut k = per_detector;
    while k > 1 && count(k) > MAX_GALLERY_PICTURES {
        k -= 1;
    }
    let mut picks = Vec::new();
    for (missed, alarmed) in &groups {
        for pick in missed.iter().take(k).chain(alarmed.iter().take(k)) {
            if picks.len() < MAX_GALLERY_PICTURES {
                picks.push(pick.clone());
            }
        }
    }
    GallerySelection {
        left_out: qualified - picks.len(),
        per_detector: k,
        picks,
    }
}

/// The trial of a pick in the suite (`None` when the suite has no such variant).
fn locate(run: &ExplainRun, pick: &GalleryPick) -> Option<TrialRef> {
    let (scene_index, scene) = run
        .suite
        .scenes
        .iter()
        .enumerate()
        .find(|(_, s)| s.id == pick.scene)?;
    let variant_index = scene
        .variants
        .iter()
        .position(|v| v.sweep_point == pick.sweep_point)?;
    Some(TrialRef {
        scene_index,
        variant_index,
        trial: pick.trial,
        calibration: false,
    })
}

/// One figure of the gallery, or why it could not be drawn.
fn figure(pick: &GalleryPick, drawn: Result<crate::Explanation, String>) -> String {
    let key = pick.key();
    let anchor = format!(
        "gallery-{}",
        crate::id_hash(&format!(
            "{}\0{}\0{key}\0{:?}",
            pick.product, pick.detector, pick.kind
        ))
    );
    let why = match pick.kind {
        PickKind::Missed => format!(
            "Missed {} of {} event{}",
            pick.events - pick.detected,
            pick.events,
            if pick.events == 1 { "" } else { "s" }
        ),
        PickKind::FalseAlarms => format!(
            "{} false alarm{}",
            pick.false_alarms,
            if pick.false_alarms == 1 { "" } else { "s" }
        ),
    };
    match drawn {
        Ok(explanation) => {
            let mismatch = if explanation.matches_record() == Some(false) {
                " <strong>The trial re-created here does not give the counts the run recorded: the code or the scene files changed since the run.</strong>"
            } else {
                ""
            };
            format!(
                "<figure class=\"gallery\" id=\"{anchor}\">{}<figcaption>{}: {} on trial <code>{}</code>.{mismatch} Redraw with <code>echobench explain RUN --detector {} --trial {}</code>.</figcaption></figure>",
                explanation.svg.trim_end(),
                escape(&crate::capitalised(&explanation.outcome())),
                escape(&pick.detector),
                escape(&key),
                escape(&pick.detector),
                escape(&key),
            )
        }
        Err(message) => format!(
            "<p class=\"note\" id=\"{anchor}\">{why}: {} on trial <code>{}</code> — not drawn: {}</p>",
            escape(&pick.detector),
            escape(&key),
            escape(&message)
        ),
    }
}

/// Pictures of the same trial (several detectors missing the same walker) show the same
/// spectrogram: the first keeps it, with an id, and the others draw it with `<use>`, which
/// references it anywhere in the same HTML page. About a third of a gallery's bytes saved.
fn share_spectrograms(figures: &mut [String], picks: &[GalleryPick]) {
    const NESTED: &str = "<svg class=\"spectrogram\"";
    let mut seen: Vec<String> = Vec::new();
    for (figure, pick) in figures.iter_mut().zip(picks) {
        let Some(start) = figure.find(NESTED) else {
            continue;
        };
        let Some(length) = figure[start..].find("</svg>") else {
            continue;
        };
        let end = start + length + "</svg>".len();
        let key = pick.key();
        let id = format!("spectrogram-{}", &crate::id_hash(&key)[..12]);
        if seen.contains(&key) {
            figure.replace_range(start..end, &format!("<use href=\"#{id}\"/>"));
        } else {
            figure.insert_str(start + "<svg".len(), &format!(" id=\"{id}\""));
            seen.push(key);
        }
    }
}

/// The gallery as report sections, one per product: for each detector its worst missed events
/// and worst false-alarm trials ([`select_gallery`] with `per_detector` of each), each trial
/// re-created from its seed and drawn with its score, threshold, alarm state and truth.
///
/// Trials are re-created once each for all the detectors that need them, in parallel; the
/// sections are the same bytes for any thread count. A trial that cannot be re-created or a
/// detector that fails on it gives a note in place of its picture; a detector whose plugin is
/// not in `plugins` is noted too. Products without a single pick get a sentence saying so.
pub fn gallery_sections(
    run: &ExplainRun,
    plugins: &[Arc<dyn DetectorPlugin>],
    per_detector: usize,
) -> Vec<Section> {
    let selection = select_gallery(&run.tallies, per_detector);
    let suite = &run.suite;
    // Detectors, resolved once; a failure is kept as the reason their pictures are missing.
    let mut labels: Vec<&str> = Vec::new();
    for pick in &selection.picks {
        if !labels.contains(&pick.detector.as_str()) {
            labels.push(&pick.detector);
        }
    }
    let resolved: Vec<(&str, Result<ReplayDetector<'_>, String>)> = labels
        .iter()
        .map(|l| {
            (
                *l,
                resolve_detector(suite, l, plugins).map_err(|e| e.to_string()),
            )
        })
        .collect();
    // Unique trials in order of first use, each with the detectors it needs.
    let mut trials: Vec<(TrialRef, Vec<usize>)> = Vec::new();
    let mut pick_trial: Vec<Option<usize>> = Vec::with_capacity(selection.picks.len());
    for pick in &selection.picks {
        let Some(at) = locate(run, pick) else {
            pick_trial.push(None);
            continue;
        };
        let detector = resolved
            .iter()
            .position(|(l, _)| *l == pick.detector)
            .unwrap_or(0);
        let slot = match trials.iter().position(|(t, _)| *t == at) {
            Some(slot) => slot,
            None => {
                trials.push((at, Vec::new()));
                trials.len() - 1
            }
        };
        if !trials[slot].1.contains(&detector) {
            trials[slot].1.push(detector);
        }
        pick_trial.push(Some(slot));
    }
    // Each trial is re-created, drawn for every pick that needs it and dropped, so memory
    // holds one trial per thread, not the whole gallery's signal.
    let draw = |pick: &GalleryPick,
                at: TrialRef,
                detectors: &[usize],
                replayed: &crate::replay::Replayed| {
        let (_, detector) = resolved
            .iter()
            .find(|(l, _)| *l == pick.detector)
            .ok_or("no such detector")?;
        let detector = detector.as_ref().map_err(Clone::clone)?;
        // The trace's place among the detectors this trial was run with.
        let index = detectors
            .iter()
            .filter(|&&d| resolved[d].1.is_ok())
            .position(|&d| resolved[d].0 == pick.detector)
            .ok_or("the detector was not run on this trial")?;
        let tally = run
            .tallies
            .detectors
            .iter()
            .find(|d| d.label == pick.detector && d.product == pick.product)
            .ok_or("no tallies for this detector")?;
        let o = operating_index(tally, None).map_err(|e| e.to_string())?;
        explain_replayed(
            run,
            tally,
            o,
            detector.plugin.id(),
            at,
            replayed,
            &replayed.traces[index],
        )
        .map_err(|e| e.to_string())
    };
    let drawn: Vec<Vec<(usize, String)>> = trials
        .par_iter()
        .enumerate()
        .map(|(slot, (at, detectors))| {
            let usable: Vec<&ReplayDetector<'_>> = detectors
                .iter()
                .filter_map(|&d| resolved[d].1.as_ref().ok())
                .collect();
            let replayed = replay(suite, *at, &usable).map_err(|e| e.to_string());
            selection
                .picks
                .iter()
                .enumerate()
                .filter(|(i, _)| pick_trial[*i] == Some(slot))
                .map(|(i, pick)| {
                    let result = match &replayed {
                        Ok(r) => draw(pick, *at, detectors, r),
                        Err(e) => Err(e.clone()),
                    };
                    (i, figure(pick, result))
                })
                .collect()
        })
        .collect();
    let mut figures: Vec<String> = selection
        .picks
        .iter()
        .map(|pick| figure(pick, Err("the suite has no such scene variant".into())))
        .collect();
    for (i, html) in drawn.into_iter().flatten() {
        figures[i] = html;
    }
    share_spectrograms(&mut figures, &selection.picks);

    let mut sections = Vec::new();
    for product in &suite.products {
        let tallies: Vec<_> = run
            .tallies
            .detectors
            .iter()
            .filter(|d| d.product == product.name)
            .collect();
        if tallies.is_empty() {
            continue;
        }
        let rate = tallies
            .first()
            .and_then(|t| t.operating.first())
            .map_or_else(
                || "the first target rate".to_string(),
                |o| rate_label(o.target_per_hour),
            );
        let mut html = String::new();
        let _ = write!(
            html,
            "<p class=\"note\">Why each detector missed and why it alarmed: for every detector, the {k} test trial{s} with the most missed events and the {k} with the most false alarms at its operating point for {rate} (ties: suite order, then trial index). Each trial is re-created from its seed and drawn with its spectrogram, the detector's score against the threshold, the alarm state (a triangle is a detection, a cross a false alarm) and the truth under it. Any trial can be drawn with <code>echobench explain RUN --detector D --trial KEY</code>.</p>",
            k = selection.per_detector,
            s = if selection.per_detector == 1 { "" } else { "s" },
            rate = escape(&rate),
        );
        for tally in &tallies {
            let _ = write!(html, "<h4>{}</h4>", escape(&tally.label));
            let mine: Vec<usize> = selection
                .picks
                .iter()
                .enumerate()
                .filter(|(_, p)| p.product == product.name && p.detector == tally.label)
                .map(|(i, _)| i)
                .collect();
            if mine.is_empty() {
                let qualified = tally.variants.iter().any(|v| {
                    v.operating.first().is_some_and(|o| {
                        o.trials.iter().any(|t| {
                            t.false_alarms > 0 || (v.label == "target" && t.detected < t.events)
                        })
                    })
                });
                html.push_str(if qualified {
                    "<p class=\"note\">Left out to keep the report small (see the note at the end).</p>"
                } else {
                    "<p>No missed event and no false alarm in the test trials at this threshold.</p>"
                });
            }
            for i in mine {
                html.push_str(&figures[i]);
            }
        }
        if selection.left_out > 0 {
            let _ = write!(
                html,
                "<p class=\"note\">{} more trial{} qualified across the products; the gallery stops at {MAX_GALLERY_PICTURES} pictures.</p>",
                selection.left_out,
                if selection.left_out == 1 { "" } else { "s" }
            );
        }
        sections.push(Section::for_product(
            product.name.clone(),
            "Worst misses and false alarms",
            html,
        ));
    }
    sections
}
