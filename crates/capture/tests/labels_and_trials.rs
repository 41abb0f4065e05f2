//! Label files and cutting captures into trials.

mod common;

use common::Scratch;
use echobench_capture::{
    cut_trials, parse_labels, read_labels, read_labels_with_tolerance, write_labels, CutError,
    Label, LabelError, TrialCut, LABEL_END_TOLERANCE_S,
};
use echobench_core::Interval;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::path::Path;

fn problems(err: &LabelError) -> Vec<(u64, String)> {
    match err {
        LabelError::Invalid { problems, .. } => problems
            .iter()
            .map(|p| (p.line, p.message.clone()))
            .collect(),
        other => panic!("expected a list of problems, got {other}"),
    }
}

#[test]
fn a_good_label_file_reads_with_its_line_numbers() {
    let scratch = Scratch::new("labels-good");
    let path = scratch.write(
        "walk.csv",
        "# walk test, bench 2\n\nstart_s,end_s,kind\n1.5,4,walk\n# a pause\n4,6.25,\"walk, then sit\"\n\n10,19.9995,sit\n",
    );
    let labels = read_labels(&path, 20.0).unwrap();
    assert_eq!(labels.len(), 3);
    assert_eq!(labels[0].interval, Interval::new(1.5, 4.0).unwrap());
    assert_eq!(labels[0].line, 4);
    assert_eq!(labels[1].kind, "walk, then sit");
    assert_eq!(labels[1].line, 6);
    assert_eq!(labels[2].line, 8);
    // Header only: a capture with nobody in it.
    let empty = scratch.write("empty.csv", "\u{feff}start_s,end_s,kind\r\n");
    assert!(read_labels(&empty, 20.0).unwrap().is_empty());
}

#[test]
fn every_problem_is_listed_at_once_with_file_and_line() {
    let text = "\
start_s,end_s,kind
1,3,walk
5,4,walk
-1,0.5,walk
2,6,walk
8,9,sit
7,7.5,walk
12,13
ten,14,walk
15,31,walk
16,17,
";
    let err = parse_labels(Path::new("session.csv"), text.as_bytes(), 30.0, 0.001).unwrap_err();
    let listed = problems(&err);
    let find = |line: u64, words: &[&str]| {
        assert!(
            listed
                .iter()
                .any(|(l, m)| *l == line && words.iter().all(|w| m.contains(w))),
            "no problem on line {line} with {words:?} in\n{err}"
        );
    };
    find(3, &["end_s = 4 is not after start_s = 5"]);
    find(4, &["start_s = -1 is negative"]);
    find(5, &["overlaps the label on line 2", "[1, 3]"]);
    find(7, &["not sorted", "line 6"]);
    find(8, &["missing column", "kind"]);
    find(9, &["`start_s` = `ten` is not a number"]);
    find(10, &["end_s = 31 is past the end of the capture (30 s"]);
    find(11, &["`kind` is empty"]);
    let text = err.to_string();
    assert!(text.starts_with("label file `session.csv` has"), "{text}");
    // Problems come in line order.
    let lines: Vec<u64> = listed.iter().map(|(l, _)| *l).collect();
    assert!(lines.windows(2).all(|w| w[0] <= w[1]));
}

#[test]
fn headers_are_checked() {
    let read = |text: &str| parse_labels(Path::new("l.csv"), text.as_bytes(), 10.0, 0.001);
    let listed = problems(&read("start,end_s\n1,2,walk\n").unwrap_err());
    assert_eq!(listed[0].0, 1);
    assert!(
        listed[0].1.contains("missing columns `start_s`, `kind`"),
        "{listed:?}"
    );
    let listed = problems(&read("1,2,walk\n3,2,walk\n").unwrap_err());
    assert!(listed[0].1.contains("header line"), "{listed:?}");
    assert!(
        listed[1].1.contains("not after"),
        "the first row is still checked: {listed:?}"
    );
    let listed = problems(&read("# only a comment\n").unwrap_err());
    assert!(listed[0].1.contains("empty"), "{listed:?}");
    assert!(matches!(
        parse_labels(Path::new("l.csv"), "".as_bytes(), f64::NAN, 0.001),
        Err(LabelError::Setting { .. })
    ));
    let missing = read_labels(Path::new("/nonexistent/labels.csv"), 10.0).unwrap_err();
    assert!(matches!(missing, LabelError::Io { .. }));
    assert!(missing.to_string().contains("/nonexistent/labels.csv"));
}

#[test]
fn an_end_just_past_the_capture_is_clipped_within_the_tolerance() {
    let read = |end: f64| {
        let text = format!("start_s,end_s,kind\n1,{end},walk\n");
        parse_labels(
            Path::new("l.csv"),
            text.as_bytes(),
            10.0,
            LABEL_END_TOLERANCE_S,
        )
    };
    let labels = read(10.0 + 0.5 * LABEL_END_TOLERANCE_S).unwrap();
    assert_eq!(labels[0].interval.end_s(), 10.0);
    assert!(read(10.0 + 2.0 * LABEL_END_TOLERANCE_S).is_err());
    let scratch = Scratch::new("labels-tol");
    let path = scratch.write("l.csv", "start_s,end_s,kind\n1,10.004,walk\n");
    // One sample at 200 Hz is 5 ms.
    assert!(read_labels(&path, 10.0).is_err());
    assert_eq!(
        read_labels_with_tolerance(&path, 10.0, 0.005).unwrap()[0]
            .interval
            .end_s(),
        10.0
    );
    // A start at the very end is refused even within the tolerance.
    let at_end = "start_s,end_s,kind\n10,10.0005,walk\n";
    assert!(parse_labels(Path::new("l.csv"), at_end.as_bytes(), 10.0, 0.001).is_err());
}

#[test]
fn written_labels_read_back_exactly() {
    let scratch = Scratch::new("labels-write");
    let path = scratch.path("out.csv");
    let labels = vec![
        Label::new(Interval::new(0.1 + 0.2, 1.0 / 3.0 + 1.0).unwrap(), "walk"),
        Label::new(
            Interval::new(2.0, 7.123456789012345).unwrap(),
            "sit, \"quiet\"",
        ),
    ];
    write_labels(&path, &labels).unwrap();
    let back = read_labels(&path, 10.0).unwrap();
    assert_eq!(back.len(), 2);
    for (a, b) in labels.iter().zip(&back) {
        assert_eq!(a.interval, b.interval);
        assert_eq!(a.kind, b.kind);
    }
}

#[test]
fn trials_are_cut_back_to_back_or_with_hop_and_skip_and_the_last_partial_one_dropped() {
    let trials = cut_trials(25_000, 1000.0, &TrialCut::back_to_back(10.0), &[]).unwrap();
    let starts: Vec<u64> = trials.iter().map(|t| t.start_frame).collect();
    assert_eq!(starts, vec![0, 10_000]);
    assert!(trials
        .iter()
        .all(|t| t.frames == 10_000 && t.duration_s == 10.0));

    let cut = TrialCut {
        trial_s: 10.0,
        hop_s: Some(4.0),
        skip_s: 1.0,
    };
    let trials = cut_trials(25_000, 1000.0, &cut, &[]).unwrap();
    let starts: Vec<f64> = trials.iter().map(|t| t.start_s).collect();
    assert_eq!(starts, vec![1.0, 5.0, 9.0, 13.0]);
    assert_eq!(trials.last().unwrap().index, 3);

    // Exactly two trials' worth: both kept.
    assert_eq!(
        cut_trials(20_000, 1000.0, &TrialCut::back_to_back(10.0), &[])
            .unwrap()
            .len(),
        2
    );
}

#[test]
fn a_label_cut_by_a_boundary_is_a_target_in_both_trials() {
    let labels = vec![
        Label::new(Interval::new(2.0, 3.0).unwrap(), "walk"),
        Label::new(Interval::new(8.5, 11.0).unwrap(), "walk"),
        // Ends exactly where trial 2 begins: in trial 1 only.
        Label::new(Interval::new(19.0, 20.0).unwrap(), "sit"),
    ];
    let trials = cut_trials(30_000, 1000.0, &TrialCut::back_to_back(10.0), &labels).unwrap();
    let spans = |k: usize| -> Vec<(f64, f64, bool, bool)> {
        trials[k]
            .labels
            .iter()
            .map(|l| {
                (
                    l.interval.start_s(),
                    l.interval.end_s(),
                    l.began_before,
                    l.ends_after,
                )
            })
            .collect()
    };
    assert_eq!(
        spans(0),
        vec![(2.0, 3.0, false, false), (8.5, 10.0, false, true)]
    );
    assert_eq!(
        spans(1),
        vec![(0.0, 1.0, true, false), (9.0, 10.0, false, false)]
    );
    assert!(
        spans(2).is_empty(),
        "a label that only touches trial 2 is not in it"
    );
}

#[test]
fn trial_labels_agree_with_a_frame_by_frame_check() {
    // The slow, obvious version: a frame centre is inside a trial label
    // exactly when its capture time is inside a capture label.
    let mut rng = ChaCha8Rng::from_seed([21; 32]);
    for _ in 0..40 {
        let rate = [100.0, 250.0, 1000.0][rng.random_range(0..3)];
        let frames = rng.random_range(2_000u64..6_000);
        let duration = frames as f64 / rate;
        let mut labels = Vec::new();
        let mut t = rng.random_range(0.0..2.0);
        while t < duration - 0.5 {
            let end = (t + rng.random_range(0.1..4.0)).min(duration);
            labels.push(Label::new(Interval::new(t, end).unwrap(), "walk"));
            t = end + rng.random_range(0.0..3.0);
        }
        let cut = TrialCut {
            trial_s: rng.random_range(1.0..5.0),
            hop_s: Some(rng.random_range(0.5..6.0)),
            skip_s: rng.random_range(0.0..1.0),
        };
        let Ok(trials) = cut_trials(frames, rate, &cut, &labels) else {
            continue;
        };
        for trial in &trials {
            assert!(trial.start_frame + trial.frames <= frames);
            for n in 0..trial.frames {
                let t_trial = (n as f64 + 0.5) / rate;
                let t_capture = (trial.start_frame + n) as f64 / rate + 0.5 / rate;
                let in_trial = trial.labels.iter().any(|l| l.interval.contains(t_trial));
                let in_capture = labels.iter().any(|l| l.interval.contains(t_capture));
                assert_eq!(in_trial, in_capture, "trial {} frame {n}", trial.index);
            }
        }
    }
}

#[test]
fn bad_cuts_are_refused() {
    let bad = |cut: TrialCut| cut_trials(10_000, 1000.0, &cut, &[]).unwrap_err();
    assert!(matches!(
        bad(TrialCut::back_to_back(0.0)),
        CutError::Setting {
            name: "trial_s",
            ..
        }
    ));
    assert!(matches!(
        bad(TrialCut::back_to_back(f64::NAN)),
        CutError::Setting {
            name: "trial_s",
            ..
        }
    ));
    let no_hop = TrialCut {
        trial_s: 1.0,
        hop_s: Some(0.0),
        skip_s: 0.0,
    };
    assert!(matches!(
        bad(no_hop),
        CutError::Setting { name: "hop_s", .. }
    ));
    let negative_skip = TrialCut {
        trial_s: 1.0,
        hop_s: None,
        skip_s: -1.0,
    };
    assert!(matches!(
        bad(negative_skip),
        CutError::Setting { name: "skip_s", .. }
    ));
    let err = bad(TrialCut {
        trial_s: 8.0,
        hop_s: None,
        skip_s: 3.0,
    });
    assert!(matches!(err, CutError::TooShort { .. }));
    assert!(err.to_string().contains("shorter than one trial"));
    assert!(cut_trials(10_000, 0.0, &TrialCut::back_to_back(1.0), &[]).is_err());
}
