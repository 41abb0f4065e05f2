//! A perceptually ordered colour map built in the OKLab colour space.
//!
//! Lightness rises linearly from near-black to near-white while the hue turns from violet
//! through magenta and red to orange and pale yellow; chroma is reduced where a colour would
//! fall outside the sRGB gamut, never the lightness. So a brighter colour always means more
//! power, also in a grey-scale print and for readers with colour-vision deficiencies.

/// Number of entries in the colour table.
pub(crate) const COLOUR_STEPS: usize = 256;

/// Lightness (OKLab L) of the lowest and highest entry.
const LIGHTNESS_LOW: f64 = 0.17;
const LIGHTNESS_HIGH: f64 = 0.96;
/// Hue (degrees) of the lowest entry and how far it turns up to the highest (275° → 100°).
const HUE_START_DEG: f64 = 275.0;
const HUE_TURN_DEG: f64 = 185.0;

/// OKLab → linear sRGB. [Ottosson, "A perceptual color space for image processing", 2020,
/// the published conversion matrices; from memory, checked by the white-point test below]
pub(crate) fn oklab_to_linear_srgb(lightness: f64, a: f64, b: f64) -> [f64; 3] {
    let l_root = lightness + 0.396_337_777_4 * a + 0.215_803_757_3 * b;
    let m_root = lightness - 0.105_561_345_8 * a - 0.063_854_172_8 * b;
    let s_root = lightness - 0.089_484_177_5 * a - 1.291_485_548_0 * b;
    let (l, m, s) = (l_root.powi(3), m_root.powi(3), s_root.powi(3));
    [
        4.076_741_662_1 * l - 3.307_711_591_3 * m + 0.230_969_929_2 * s,
        -1.268_438_004_6 * l + 2.609_757_401_1 * m - 0.341_319_396_5 * s,
        -0.004_196_086_3 * l - 0.703_418_614_7 * m + 1.707_614_701_0 * s,
    ]
}

/// sRGB transfer function, linear → encoded, both in 0..=1. [IEC 61966-2-1:1999]
pub(crate) fn encode_srgb(linear: f64) -> f64 {
    let c = linear.clamp(0.0, 1.0);
    if c <= 0.003_130_8 {
        12.92 * c
    } else {
        1.055 * c.powf(1.0 / 2.4) - 0.055
    }
}

/// The design lightness of position `t` in 0..=1.
pub(crate) fn design_lightness(t: f64) -> f64 {
    LIGHTNESS_LOW + (LIGHTNESS_HIGH - LIGHTNESS_LOW) * t
}

fn in_gamut(rgb: [f64; 3]) -> bool {
    rgb.iter().all(|c| (-1e-9..=1.0 + 1e-9).contains(c))
}

/// The colour at position `t` in 0..=1 (clamped), as 8-bit sRGB.
fn colour_at(t: f64) -> [u8; 3] {
    let t = t.clamp(0.0, 1.0);
    let lightness = design_lightness(t);
    let hue = (HUE_START_DEG + HUE_TURN_DEG * t).to_radians();
    // Wanted chroma: low at the dark end, strongest in the middle, some left for the yellow end.
    let wanted = 0.03 + 0.06 * t + 0.16 * (std::f64::consts::PI * t).sin().powf(0.6);
    let at_chroma = |c: f64| oklab_to_linear_srgb(lightness, c * hue.cos(), c * hue.sin());
    let chroma = if in_gamut(at_chroma(wanted)) {
        wanted
    } else {
        // Largest in-gamut chroma below the wanted one, by bisection (chroma 0 is grey, in gamut).
        let (mut inside, mut outside) = (0.0, wanted);
        for _ in 0..40 {
            let mid = 0.5 * (inside + outside);
            if in_gamut(at_chroma(mid)) {
                inside = mid;
            } else {
                outside = mid;
            }
        }
        inside
    };
    at_chroma(chroma).map(|c| (255.0 * encode_srgb(c)).round() as u8)
}

/// The colour table, darkest (lowest power) first.
pub(crate) fn colour_table() -> Vec<[u8; 3]> {
    (0..COLOUR_STEPS)
        .map(|i| colour_at(i as f64 / (COLOUR_STEPS - 1) as f64))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Linear sRGB → OKLab (same source as `oklab_to_linear_srgb`).
    fn linear_srgb_to_oklab(rgb: [f64; 3]) -> [f64; 3] {
        let [r, g, b] = rgb;
        let l = 0.412_221_470_8 * r + 0.536_332_536_3 * g + 0.051_445_992_9 * b;
        let m = 0.211_903_498_2 * r + 0.680_699_545_1 * g + 0.107_396_956_6 * b;
        let s = 0.088_302_461_9 * r + 0.281_718_837_6 * g + 0.629_978_700_5 * b;
        let (l, m, s) = (l.cbrt(), m.cbrt(), s.cbrt());
        [
            0.210_454_255_3 * l + 0.793_617_785_0 * m - 0.004_072_046_8 * s,
            1.977_998_495_1 * l - 2.428_592_205_0 * m + 0.450_593_709_9 * s,
            0.025_904_037_1 * l + 0.782_771_766_2 * m - 0.808_675_766_0 * s,
        ]
    }

    /// sRGB transfer function, encoded → linear. [IEC 61966-2-1:1999]
    fn decode_srgb(encoded: f64) -> f64 {
        if encoded <= 0.040_45 {
            encoded / 12.92
        } else {
            ((encoded + 0.055) / 1.055).powf(2.4)
        }
    }

    fn lightness_of(rgb: [u8; 3]) -> f64 {
        linear_srgb_to_oklab(rgb.map(|c| decode_srgb(f64::from(c) / 255.0)))[0]
    }

    #[test]
    fn oklab_white_point_and_round_trip() {
        // Ottosson 2020 normalises OKLab so that sRGB white has L = 1 and a = b = 0.
        let white = linear_srgb_to_oklab([1.0, 1.0, 1.0]);
        assert!((white[0] - 1.0).abs() < 1e-4, "{white:?}");
        assert!(white[1].abs() < 1e-4 && white[2].abs() < 1e-4, "{white:?}");
        for rgb in [[0.2, 0.5, 0.9], [0.9, 0.1, 0.05], [0.01, 0.02, 0.0]] {
            let lab = linear_srgb_to_oklab(rgb);
            let back = oklab_to_linear_srgb(lab[0], lab[1], lab[2]);
            for (x, y) in rgb.iter().zip(back) {
                assert!((x - y).abs() < 1e-6, "{rgb:?} -> {back:?}");
            }
        }
    }

    #[test]
    fn srgb_transfer_function_values() {
        // IEC 61966-2-1: the two pieces meet at 0.04045 encoded / 0.0031308 linear; mid grey
        // 0.5 encoded is 0.214 linear (common practice value).
        assert!((decode_srgb(0.5) - 0.214_041).abs() < 1e-6);
        assert!((encode_srgb(decode_srgb(0.04045)) - 0.04045).abs() < 1e-6);
        assert!((encode_srgb(1.0) - 1.0).abs() < 1e-12);
        assert_eq!(encode_srgb(0.0), 0.0);
    }

    #[test]
    fn table_lightness_follows_the_design_ramp() {
        let table = colour_table();
        let measured: Vec<f64> = table.iter().map(|&c| lightness_of(c)).collect();
        for (i, &lightness) in measured.iter().enumerate() {
            let wanted = design_lightness(i as f64 / (COLOUR_STEPS - 1) as f64);
            // 8-bit rounding moves L by at most a few thousandths.
            assert!(
                (lightness - wanted).abs() < 0.006,
                "entry {i}: L {lightness} vs {wanted}"
            );
        }
        // Ordered: every step of three entries (ΔL ≈ 0.009 by design) is strictly brighter.
        for i in 0..COLOUR_STEPS - 3 {
            assert!(measured[i + 3] > measured[i], "entries {i}..{}", i + 3);
        }
        assert!(measured[0] < 0.2 && measured[COLOUR_STEPS - 1] > 0.93);
    }

    #[test]
    fn table_is_not_grey() {
        // The hue turn must survive gamut clipping: the middle of the map is strongly coloured.
        let table = colour_table();
        let [r, g, b] = table[COLOUR_STEPS / 2];
        let spread = r.max(g).max(b) - r.min(g).min(b);
        assert!(spread > 100, "{:?}", table[COLOUR_STEPS / 2]);
    }
}
