//! Pictures: written atomically, well-formed, labelled, and bounded in size.

use std::f64::consts::PI;
use std::path::{Path, PathBuf};

use echobench_spectrogram::{
    draw_picture, short_time_spectrum, write_picture, write_spectrogram, Channels, Marked,
    SpectrogramError, SpectrogramOptions, MAX_FREQUENCY_CELLS, MAX_TIME_CELLS,
};
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};

/// A fresh, empty folder for one test (kept after the run so the pictures can be looked at).
fn test_folder(name: &str) -> PathBuf {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join("spectrogram-pictures")
        .join(name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// A test signal with recognisable features: a walker whose Doppler swings with the gait
/// (torso and a faster-swinging limb), a fan line with harmonics, a short burst, and noise.
/// Not a physical model; only something to look at and to find in the picture.
fn test_trial(channels: Channels, fs: f64, duration_s: f64) -> (Vec<f32>, Vec<Marked>) {
    let samples = (duration_s * fs) as usize;
    let mut rng = ChaCha8Rng::from_seed([5; 32]);
    let noise = Normal::new(0.0, 2e-4).unwrap();
    let walk = (0.2 * duration_s, 0.5 * duration_s);
    let fan = (0.55 * duration_s, 0.9 * duration_s);
    let burst = (0.12 * duration_s, 0.12 * duration_s + 0.05);
    let (mut torso_phase, mut limb_phase) = (0.0_f64, 0.0_f64);
    let mut out = Vec::with_capacity(samples * channels.count());
    for n in 0..samples {
        let t = n as f64 / fs;
        let mut z = (0.0_f64, 0.0_f64);
        let mut add = |amplitude: f64, phase: f64| {
            z.0 += amplitude * phase.cos();
            z.1 += amplitude * phase.sin();
        };
        if t >= walk.0 && t < walk.1 {
            let torso_hz = 150.0 * (1.0 + 0.12 * (2.0 * PI * 1.9 * t).sin());
            let limb_hz = torso_hz * (1.0 + 0.9 * (2.0 * PI * 0.95 * t).sin());
            torso_phase += 2.0 * PI * torso_hz / fs;
            limb_phase += 2.0 * PI * limb_hz / fs;
            add(0.05, torso_phase);
            add(0.012, limb_phase);
        }
        if t >= fan.0 && t < fan.1 {
            for harmonic in 1..=3 {
                let hz = 120.0 * harmonic as f64;
                add(0.01 / harmonic as f64, 2.0 * PI * hz * t);
                add(0.01 / harmonic as f64, -2.0 * PI * hz * t);
            }
        }
        if t >= burst.0 && t < burst.1 {
            add(0.02, 2.0 * PI * 400.0 * t);
        }
        add(0.002, 2.0 * PI * 50.0 * t); // mains hum
        out.push((z.0 + noise.sample(&mut rng)) as f32);
        if channels == Channels::Iq {
            out.push((z.1 + noise.sample(&mut rng)) as f32);
        }
    }
    let marks = vec![
        Marked {
            start_s: walk.0,
            end_s: walk.1,
            label: "person walking <toward> sensor & back".into(),
            is_target: true,
        },
        Marked {
            start_s: fan.0,
            end_s: fan.1,
            label: "ceiling fan".into(),
            is_target: false,
        },
        Marked {
            start_s: burst.0,
            end_s: burst.1,
            label: "radio burst".into(),
            is_target: false,
        },
        Marked {
            start_s: 0.0,
            end_s: duration_s,
            label: "mains hum".into(),
            is_target: false,
        },
    ];
    (out, marks)
}

/// A small but complete XML 1.0 well-formedness check: one root element, balanced and
/// correctly nested tags, quoted attribute values without `<`, unique attribute names, and only
/// the five predefined or numeric character references (XML 1.0, 5th ed., §2.1, §3.1, §4.1).
fn assert_well_formed_xml(text: &str) {
    fn check_references(fragment: &str) {
        let mut rest = fragment;
        while let Some(at) = rest.find('&') {
            let end = rest[at..].find(';').expect("unterminated reference") + at;
            let name = &rest[at + 1..end];
            let ok = matches!(name, "lt" | "gt" | "amp" | "quot" | "apos")
                || (name.starts_with("#x")
                    && name.len() > 2
                    && name[2..].chars().all(|c| c.is_ascii_hexdigit()))
                || (name.starts_with('#')
                    && name.len() > 1
                    && name[1..].chars().all(|c| c.is_ascii_digit()));
            assert!(ok, "bad reference &{name};");
            rest = &rest[end + 1..];
        }
    }
    fn is_name(name: &str) -> bool {
        let mut chars = name.chars();
        matches!(chars.next(), Some(c) if c.is_alphabetic() || c == '_' || c == ':')
            && chars.all(|c| c.is_alphanumeric() || matches!(c, '_' | ':' | '-' | '.'))
    }
    let mut stack: Vec<&str> = Vec::new();
    let mut roots = 0;
    let mut rest = text;
    while !rest.is_empty() {
        let Some(open) = rest.find('<') else {
            assert!(
                rest.trim().is_empty() || !stack.is_empty(),
                "text outside the root"
            );
            check_references(rest);
            break;
        };
        let between = &rest[..open];
        assert!(!between.contains('>') || !stack.is_empty());
        if stack.is_empty() {
            assert!(
                between.trim().is_empty(),
                "text outside the root: {between:?}"
            );
        }
        check_references(between);
        rest = &rest[open..];
        if let Some(body) = rest.strip_prefix("<?") {
            let end = body
                .find("?>")
                .expect("unterminated processing instruction");
            rest = &body[end + 2..];
            continue;
        }
        if let Some(body) = rest.strip_prefix("<!--") {
            let end = body.find("-->").expect("unterminated comment");
            rest = &body[end + 3..];
            continue;
        }
        let close = rest.find('>').expect("unterminated tag");
        let tag = &rest[1..close];
        rest = &rest[close + 1..];
        if let Some(name) = tag.strip_prefix('/') {
            let open_name = stack.pop().expect("end tag without start tag");
            assert_eq!(open_name, name.trim(), "mis-nested tags");
            continue;
        }
        let (tag, self_closing) = match tag.strip_suffix('/') {
            Some(inner) => (inner, true),
            None => (tag, false),
        };
        let name_end = tag.find(char::is_whitespace).unwrap_or(tag.len());
        let name = &tag[..name_end];
        assert!(is_name(name), "bad element name {name:?}");
        let mut attributes = &tag[name_end..];
        let mut seen = Vec::new();
        loop {
            attributes = attributes.trim_start();
            if attributes.is_empty() {
                break;
            }
            let eq = attributes.find('=').expect("attribute without value");
            let attribute = attributes[..eq].trim();
            assert!(is_name(attribute), "bad attribute name {attribute:?}");
            assert!(
                !seen.contains(&attribute),
                "duplicate attribute {attribute}"
            );
            seen.push(attribute);
            let value_part = attributes[eq + 1..].trim_start();
            let quote = value_part.chars().next().expect("missing value");
            assert!(quote == '"' || quote == '\'', "unquoted attribute value");
            let end = value_part[1..].find(quote).expect("unterminated value") + 1;
            let value = &value_part[1..end];
            assert!(!value.contains('<'), "'<' in attribute value");
            check_references(value);
            attributes = &value_part[end + 1..];
        }
        if stack.is_empty() {
            roots += 1;
        }
        if !self_closing {
            stack.push(name);
        }
    }
    assert!(stack.is_empty(), "unclosed elements: {stack:?}");
    assert_eq!(roots, 1, "exactly one root element");
}

#[test]
fn xml_checker_rejects_broken_documents() {
    // The checker itself must be able to fail.
    for broken in [
        "<a><b></a></b>",
        "<a x=1/>",
        "<a x=\"1\" x=\"2\"/>",
        "<a>&nbsp;</a>",
        "<a/><b/>",
        "<a>",
        "<a x=\"<\"/>",
    ] {
        let result = std::panic::catch_unwind(|| assert_well_formed_xml(broken));
        assert!(result.is_err(), "accepted {broken:?}");
    }
    assert_well_formed_xml("<?xml version=\"1.0\"?>\n<a x='1'><!-- c --><b/>t &amp; &#x41;</a>\n");
}

fn decode_base64(text: &str) -> Vec<u8> {
    use base64::Engine as _;
    base64::engine::general_purpose::STANDARD
        .decode(text)
        .expect("the embedded image is base64")
}

/// The embedded heat-map PNG of an SVG written by this crate.
fn embedded_png(svg: &str) -> Vec<u8> {
    let start = svg.find("data:image/png;base64,").expect("embedded image") + 22;
    let end = svg[start..].find('"').unwrap() + start;
    decode_base64(&svg[start..end])
}

/// The value of a numeric attribute in the first element that starts with `element_start`.
fn attribute(svg: &str, element_start: &str, name: &str) -> f64 {
    let at = svg.find(element_start).expect("element");
    let element = &svg[at..at + svg[at..].find('>').unwrap()];
    let key = format!(" {name}=\"");
    let start = element.find(&key).expect("attribute") + key.len();
    let end = element[start..].find('"').unwrap() + start;
    element[start..end].parse().unwrap()
}

/// Width and height from a PNG's header, read by the `png` crate's decoder.
fn png_size(png_bytes: &[u8]) -> (u32, u32) {
    let reader = png::Decoder::new(png_bytes)
        .read_info()
        .expect("a PNG header");
    let info = reader.info();
    (info.width, info.height)
}

/// Row-major RGB pixels of a PNG, read by the `png` crate's decoder.
fn decode_png(png_bytes: &[u8]) -> (usize, usize, Vec<u8>) {
    let decoder = png::Decoder::new(png_bytes);
    let mut reader = decoder.read_info().expect("a PNG header");
    let mut pixels = vec![0; reader.output_buffer_size()];
    let info = reader.next_frame(&mut pixels).expect("the PNG's pixels");
    assert_eq!(info.color_type, png::ColorType::Rgb);
    pixels.truncate(info.buffer_size());
    (info.width as usize, info.height as usize, pixels)
}

fn leftover_temp_files(dir: &Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|name| name.contains(".tmp"))
        .collect()
}

#[test]
fn svg_is_well_formed_and_carries_every_label() {
    let dir = test_folder("labels");
    let fs = 2000.0;
    let (samples, marks) = test_trial(Channels::Real, fs, 20.0);
    let options = SpectrogramOptions {
        title: "Walker & fan, 24 GHz <real IF>".into(),
        max_hz: Some(500.0),
        ..SpectrogramOptions::default()
    };
    let path = dir.join("trial.svg");
    let spectrum =
        write_spectrogram(&path, &samples, Channels::Real, fs, &marks, &options).unwrap();
    assert_eq!(spectrum.sample_rate_hz, fs);
    let svg = std::fs::read_to_string(&path).unwrap();
    assert_well_formed_xml(&svg);
    for expected in [
        "person walking &lt;toward&gt; sensor &amp; back",
        "ceiling fan",
        "radio burst",
        "mains hum",
        "Walker &amp; fan, 24 GHz &lt;real IF&gt;",
        "Time (s)",
        "Doppler frequency |f_d| (Hz)",
        "PSD (dB re 1 V²/Hz)",
    ] {
        assert!(svg.contains(expected), "missing {expected:?}");
    }
    // 500 Hz at 7.8125 Hz a bin: bins 0..=64 are shown, one row each.
    assert_eq!(png_size(&embedded_png(&svg)).1, 65);
    // Text is left to the viewer: a generic family, no font data inside the SVG.
    assert!(svg.contains("font-family=\"sans-serif\""));
    assert!(!svg.contains("@font-face"));
    assert!(leftover_temp_files(&dir).is_empty());
}

#[test]
fn svg_size_is_bounded_for_a_long_trial() {
    // 60 s at 2 kHz, as the synth command writes: 1 872 frames of 129 or 256 bins.
    let dir = test_folder("size");
    let fs = 2000.0;
    for channels in [Channels::Real, Channels::Iq] {
        let (samples, marks) = test_trial(channels, fs, 60.0);
        let path = dir.join(format!("long-{channels}.svg"));
        let options = SpectrogramOptions {
            title: format!("60 s {channels} trial"),
            ..SpectrogramOptions::default()
        };
        let spectrum = write_spectrogram(&path, &samples, channels, fs, &marks, &options).unwrap();
        assert!(
            spectrum.frame_count() > MAX_TIME_CELLS,
            "the test must force pooling"
        );
        let bytes = std::fs::metadata(&path).unwrap().len();
        assert!(bytes < 3_000_000, "{channels}: {bytes} bytes");
        let svg = std::fs::read_to_string(&path).unwrap();
        assert_well_formed_xml(&svg);
        let (columns, rows) = png_size(&embedded_png(&svg));
        assert!(columns as usize <= MAX_TIME_CELLS && rows as usize <= MAX_FREQUENCY_CELLS);
        // Pooling uses whole groups: 1 872 frames in groups of 4 give 468 columns.
        assert_eq!(columns as usize, spectrum.frame_count().div_ceil(4));
    }
}

#[test]
fn svg_heat_map_is_aligned_with_its_axes() {
    // A tone switched on from 2 s to 4 s of a 6 s trial must appear, read back through the
    // picture's own geometry, at its frequency and between those times.
    let dir = test_folder("alignment");
    let fs = 2000.0;
    for (channels, tone_hz) in [(Channels::Real, 250.0), (Channels::Iq, -312.5)] {
        let samples: Vec<f32> = (0..12_000)
            .flat_map(|n| {
                let t = n as f64 / fs;
                let on = if (2.0..4.0).contains(&t) { 0.1 } else { 0.0 };
                let phase = 2.0 * PI * tone_hz * t;
                let pair = [(on * phase.cos()) as f32, (on * phase.sin()) as f32];
                pair.into_iter().take(channels.count())
            })
            .collect();
        let path = dir.join(format!("tone-{channels}.svg"));
        let options = SpectrogramOptions::default();
        write_spectrogram(&path, &samples, channels, fs, &[], &options).unwrap();
        let svg = std::fs::read_to_string(&path).unwrap();
        // The clip path's rectangle is the plot area.
        let clip = &svg[svg.find("<clipPath").unwrap()..];
        let (plot_x, plot_y) = (attribute(clip, "<rect", "x"), attribute(clip, "<rect", "y"));
        let (plot_w, plot_h) = (
            attribute(clip, "<rect", "width"),
            attribute(clip, "<rect", "height"),
        );
        let (image_x, image_y) = (
            attribute(&svg, "<image", "x"),
            attribute(&svg, "<image", "y"),
        );
        let image_w = attribute(&svg, "<image", "width");
        let image_h = attribute(&svg, "<image", "height");
        let (columns, rows, rgb) = decode_png(&embedded_png(&svg));
        let brightness = |row: usize, column: usize| {
            let at = (row * columns + column) * 3;
            u32::from(rgb[at]) + u32::from(rgb[at + 1]) + u32::from(rgb[at + 2])
        };
        let (peak_row, peak_column) = (0..rows)
            .flat_map(|r| (0..columns).map(move |c| (r, c)))
            .max_by_key(|&(r, c)| brightness(r, c))
            .unwrap();
        let (f_low, f_high) = match channels {
            Channels::Real => (0.0, fs / 2.0),
            Channels::Iq => (-fs / 2.0, fs / 2.0),
        };
        let y = image_y + (peak_row as f64 + 0.5) * image_h / rows as f64;
        let shown_hz = f_high - (y - plot_y) / plot_h * (f_high - f_low);
        let bin_width = fs / 256.0;
        assert!(
            (shown_hz - tone_hz).abs() <= bin_width / 2.0,
            "{channels}: tone at {tone_hz} Hz drawn at {shown_hz} Hz"
        );
        // Columns at full brightness on the tone's row: frames wholly inside 2..4 s.
        let full = brightness(peak_row, peak_column);
        let lit: Vec<usize> = (0..columns)
            .filter(|&c| brightness(peak_row, c) + 6 >= full)
            .collect();
        let time_of = |x: f64| (x - plot_x) / plot_w * 6.0;
        let first_s = time_of(image_x + lit[0] as f64 * image_w / columns as f64);
        let last_s = time_of(image_x + (lit[lit.len() - 1] + 1) as f64 * image_w / columns as f64);
        // A whole frame (128 ms) must fit inside the tone, so the lit span is shorter by up to
        // one frame plus a hop at each end.
        assert!(
            first_s > 1.95 && first_s < 2.2,
            "{channels}: lit from {first_s} s"
        );
        assert!(
            last_s > 3.8 && last_s < 4.05,
            "{channels}: lit until {last_s} s"
        );
    }
}

#[test]
fn a_picture_drawn_in_memory_nests_with_its_plot_area_and_distinct_ids() {
    let fs = 1000.0;
    let (samples, marks) = test_trial(Channels::Iq, fs, 12.0);
    let spectrum = short_time_spectrum(&samples, Channels::Iq, fs, 128, 32).unwrap();
    let options = SpectrogramOptions {
        title: "nested <one>".into(),
        size_px: (1000, 600),
        ..SpectrogramOptions::default()
    };
    let picture = draw_picture(&spectrum, &marks, &options).unwrap();
    assert_eq!(picture.size_px(), (1000, 600));
    let document = picture.document().into_string();
    assert_well_formed_xml(&document);
    // The plot area is the clip path's rectangle, which the heat map is clipped to.
    let area = picture.plot_area();
    let clip = &document[document.find("<clipPath").unwrap()..];
    assert!((attribute(clip, "<rect", "x") - area.left).abs() < 0.051);
    assert!((attribute(clip, "<rect", "width") - area.width).abs() < 0.051);
    assert!(area.left > 0.0 && area.right() < 1000.0 && area.bottom() < 600.0);
    // Nested twice on one page: the same drawing, each with its own clip id.
    let a = picture.nested(40.0, "spectrogram", "a").into_string();
    let b = picture.nested(40.0, "spectrogram", "b").into_string();
    assert!(a.starts_with("<svg class=\"spectrogram\" x=\"0\" y=\"40\""));
    assert_well_formed_xml(&a);
    let id = |svg: &str| {
        let at = svg.find("<clipPath id=\"").unwrap() + 14;
        svg[at..at + svg[at..].find('"').unwrap()].to_string()
    };
    assert_ne!(id(&a), id(&b));
    assert!(a.contains(&format!("url(#{})", id(&a))));
    assert_eq!(a.replace(&id(&a), "ID"), b.replace(&id(&b), "ID"));
    // Refusals in memory carry no file name.
    let bad = SpectrogramOptions {
        size_px: (10, 10),
        ..options
    };
    let error = draw_picture(&spectrum, &marks, &bad).err().unwrap();
    assert!(matches!(error, SpectrogramError::Drawing { .. }), "{error}");
}

#[test]
fn rewriting_replaces_the_file_whole() {
    let dir = test_folder("rewrite");
    let path = dir.join("again.svg");
    std::fs::write(&path, "old content").unwrap();
    let fs = 1000.0;
    let (samples, marks) = test_trial(Channels::Real, fs, 5.0);
    let spectrum = short_time_spectrum(&samples, Channels::Real, fs, 128, 32).unwrap();
    write_picture(&path, &spectrum, &marks, &SpectrogramOptions::default()).unwrap();
    let first = std::fs::read(&path).unwrap();
    assert!(first.starts_with(b"<svg"));
    // Same input, same bytes: the picture is deterministic.
    write_picture(&path, &spectrum, &marks, &SpectrogramOptions::default()).unwrap();
    assert_eq!(std::fs::read(&path).unwrap(), first);
    assert!(leftover_temp_files(&dir).is_empty());
}

#[test]
fn errors_name_the_file_and_leave_nothing_behind() {
    let dir = test_folder("errors");
    let fs = 1000.0;
    let (samples, marks) = test_trial(Channels::Real, fs, 3.0);
    let spectrum = short_time_spectrum(&samples, Channels::Real, fs, 128, 32).unwrap();
    let options = SpectrogramOptions::default();

    for name in ["trial.jpg", "trial.png"] {
        let other = dir.join(name);
        let error = write_picture(&other, &spectrum, &marks, &options).unwrap_err();
        assert!(matches!(error, SpectrogramError::UnsupportedFormat { .. }));
        assert!(error.to_string().contains(name), "{error}");
    }

    let svg = dir.join("trial.svg");
    let backwards = [Marked {
        start_s: 2.0,
        end_s: 1.0,
        label: "walker".into(),
        is_target: true,
    }];
    let error = write_picture(&svg, &spectrum, &backwards, &options).unwrap_err();
    assert!(error.to_string().contains("trial.svg") && error.to_string().contains("walker"));

    for bad in [
        SpectrogramOptions {
            dynamic_range_db: 0.0,
            ..options.clone()
        },
        SpectrogramOptions {
            dynamic_range_db: f64::NAN,
            ..options.clone()
        },
        SpectrogramOptions {
            max_hz: Some(-5.0),
            ..options.clone()
        },
        SpectrogramOptions {
            size_px: (10, 10),
            ..options.clone()
        },
    ] {
        let error = write_picture(&svg, &spectrum, &marks, &bad).unwrap_err();
        assert!(
            matches!(error, SpectrogramError::InvalidPicture { .. }),
            "{error}"
        );
        assert!(error.to_string().contains("trial.svg"));
    }

    let mut broken = spectrum.clone();
    broken.power_db.pop();
    let error = write_picture(&svg, &broken, &marks, &options).unwrap_err();
    assert!(
        matches!(error, SpectrogramError::InvalidPicture { .. }),
        "{error}"
    );

    let missing_folder = dir.join("no-such-folder").join("trial.svg");
    let error = write_picture(&missing_folder, &spectrum, &marks, &options).unwrap_err();
    assert!(matches!(error, SpectrogramError::Io { .. }));
    assert!(error.to_string().contains("no-such-folder"));

    let short =
        write_spectrogram(&svg, &samples[..100], Channels::Real, fs, &marks, &options).unwrap_err();
    assert!(matches!(short, SpectrogramError::Analysis { .. }));
    assert!(short.to_string().contains("trial.svg"), "{short}");

    let names: Vec<_> = std::fs::read_dir(&dir).unwrap().collect();
    assert!(names.is_empty(), "files left behind: {names:?}");
}

#[test]
fn marks_outside_the_trial_and_no_marks_are_drawn_without_error() {
    let dir = test_folder("edge-marks");
    let fs = 1000.0;
    let (samples, _) = test_trial(Channels::Iq, fs, 4.0);
    let spectrum = short_time_spectrum(&samples, Channels::Iq, fs, 128, 32).unwrap();
    let options = SpectrogramOptions::default();
    let path = dir.join("none.svg");
    write_picture(&path, &spectrum, &[], &options).unwrap();
    let svg = std::fs::read_to_string(&path).unwrap();
    assert_well_formed_xml(&svg);
    assert!(svg.contains("no truth intervals"));

    let marks: Vec<Marked> = (0..12)
        .map(|i| Marked {
            start_s: -1.0 + 0.4 * i as f64,
            end_s: -0.5 + 0.5 * i as f64,
            label: format!("overlapping {i}"),
            is_target: i % 3 == 0,
        })
        .chain([Marked {
            start_s: 10.0,
            end_s: 11.0,
            label: "after the end".into(),
            is_target: true,
        }])
        .collect();
    let path = dir.join("crowded.svg");
    write_picture(&path, &spectrum, &marks, &options).unwrap();
    let svg = std::fs::read_to_string(&path).unwrap();
    assert_well_formed_xml(&svg);
    assert!(svg.contains("overlapping 7"));
    assert!(
        !svg.contains("after the end"),
        "marks past the trial are not drawn"
    );
    assert!(svg.contains("+ approaching"));
}
