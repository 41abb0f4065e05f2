//! Numeric scene fields that may be fixed or drawn per trial.

use echobench_yaml_reader::{Fields, Location, Node, Reader, Value};
use rand::Rng;
use rand_distr::{Distribution, StandardNormal};

/// A number in a scene file: fixed, or a distribution drawn once per trial.
///
/// YAML forms: `1.4`, `{uniform: [1.0, 1.6]}`, `{normal: {mean: 1.4, sd: 0.1, min: 0.5, max: 2.5}}`,
/// `{choice: [1, 2, 4]}`.
#[derive(Debug, Clone, PartialEq)]
pub enum Param {
    /// Always this value.
    Fixed(f64),
    /// Uniform on `[low, high]`.
    Uniform {
        /// Lower end.
        low: f64,
        /// Upper end.
        high: f64,
    },
    /// Normal, truncated to `[min, max]` by redrawing.
    Normal {
        /// Mean.
        mean: f64,
        /// Standard deviation.
        sd: f64,
        /// Lower truncation (−∞ when absent).
        min: f64,
        /// Upper truncation (+∞ when absent).
        max: f64,
    },
    /// One of the listed values, equally likely.
    Choice(Vec<f64>),
}

/// The physically allowed range of a field.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bounds {
    /// Smallest allowed value.
    pub min: f64,
    /// Largest allowed value.
    pub max: f64,
    /// Whether `min` itself is allowed.
    pub min_inclusive: bool,
}

impl Bounds {
    /// Any finite number.
    pub const ANY: Bounds = Bounds {
        min: f64::NEG_INFINITY,
        max: f64::INFINITY,
        min_inclusive: true,
    };
    /// Strictly positive.
    pub const POSITIVE: Bounds = Bounds {
        min: 0.0,
        max: f64::INFINITY,
        min_inclusive: false,
    };
    /// Zero or more.
    pub const NON_NEGATIVE: Bounds = Bounds {
        min: 0.0,
        max: f64::INFINITY,
        min_inclusive: true,
    };

    /// `[min, max]`.
    pub const fn closed(min: f64, max: f64) -> Bounds {
        Bounds {
            min,
            max,
            min_inclusive: true,
        }
    }

    /// `(min, max]`.
    pub const fn above(min: f64, max: f64) -> Bounds {
        Bounds {
            min,
            max,
            min_inclusive: false,
        }
    }

    /// True when `x` is allowed.
    pub fn allows(&self, x: f64) -> bool {
        let low_ok = if self.min_inclusive {
            x >= self.min
        } else {
            x > self.min
        };
        low_ok && x <= self.max
    }

    fn describe(&self) -> String {
        let low = if self.min_inclusive { "[" } else { "(" };
        format!("{low}{}, {}]", fmt_bound(self.min), fmt_bound(self.max))
    }
}

fn fmt_bound(x: f64) -> String {
    if x == f64::INFINITY {
        "∞".into()
    } else if x == f64::NEG_INFINITY {
        "−∞".into()
    } else {
        format!("{x}")
    }
}

impl Param {
    /// The smallest and largest value a draw can take.
    pub fn support(&self) -> (f64, f64) {
        match self {
            Param::Fixed(x) => (*x, *x),
            Param::Uniform { low, high } => (*low, *high),
            Param::Normal { min, max, .. } => (*min, *max),
            Param::Choice(values) => values
                .iter()
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
                    (lo.min(*v), hi.max(*v))
                }),
        }
    }

    /// The value when fixed; the middle of the support otherwise (for checks and summaries).
    pub fn typical(&self) -> f64 {
        match self {
            Param::Fixed(x) => *x,
            Param::Uniform { low, high } => 0.5 * (low + high),
            Param::Normal { mean, .. } => *mean,
            Param::Choice(values) => values[0],
        }
    }

    /// Draws one value. A fixed value consumes no random numbers.
    pub fn draw<R: Rng + ?Sized>(&self, rng: &mut R) -> f64 {
        match self {
            Param::Fixed(x) => *x,
            Param::Uniform { low, high } => low + (high - low) * rng.random::<f64>(),
            Param::Normal { mean, sd, min, max } => {
                // Truncation by redrawing; the support check at load time keeps the
                // acceptance region within ±6 sd of the mean, so this ends quickly.
                for _ in 0..10_000 {
                    let z: f64 = StandardNormal.sample(rng);
                    let x = mean + sd * z;
                    if x >= *min && x <= *max {
                        return x;
                    }
                }
                mean.clamp(*min, *max)
            }
            Param::Choice(values) => values[rng.random_range(0..values.len())],
        }
    }

    /// Reads a param from `node`, checking that every value it can take is within `bounds`.
    pub fn read(node: &Node, path: &str, bounds: Bounds, reader: &mut Reader) -> Option<Param> {
        let param = match &node.value {
            Value::Int(_) | Value::Float(_) => Param::Fixed(reader.read::<f64>(node, path)?),
            Value::Map(entries) if entries.len() == 1 => {
                let (kind, value, _) = &entries[0];
                let inner = format!("{path}.{kind}");
                match kind.as_str() {
                    "uniform" => {
                        let [low, high]: [f64; 2] = reader.read(value, &inner)?;
                        if low > high {
                            reader.error(
                                value.location,
                                &inner,
                                format!("low end {low} is above high end {high}"),
                            );
                            return None;
                        }
                        Param::Uniform { low, high }
                    }
                    "normal" => {
                        let mut f = reader.fields(value, &inner)?;
                        let mean: Option<f64> = f.required("mean");
                        let sd: Option<f64> = f.required("sd");
                        let min = f.optional_or("min", f64::NEG_INFINITY);
                        let max = f.optional_or("max", f64::INFINITY);
                        f.finish();
                        let (mean, sd) = (mean?, sd?);
                        if sd <= 0.0 {
                            reader.error(
                                value.location,
                                &format!("{inner}.sd"),
                                "must be positive",
                            );
                            return None;
                        }
                        if mean < min
                            || mean > max
                            || (min.max(mean - 6.0 * sd) >= max.min(mean + 6.0 * sd))
                        {
                            reader.error(
                                value.location,
                                &inner,
                                "the mean must lie inside [min, max]",
                            );
                            return None;
                        }
                        // Without declared truncation a normal is cut at mean ± 6 sd; its support
                        // is then checked against the field's bounds below, so a normal that
                        // could reach an impossible value is refused rather than clipped.
                        Param::Normal {
                            mean,
                            sd,
                            min: min.max(mean - 6.0 * sd),
                            max: max.min(mean + 6.0 * sd),
                        }
                    }
                    "choice" => {
                        let values: Vec<f64> = reader.read(value, &inner)?;
                        if values.is_empty() {
                            reader.error(value.location, &inner, "needs at least one value");
                            return None;
                        }
                        Param::Choice(values)
                    }
                    other => {
                        let hint = echobench_yaml_reader::suggest(other, &["uniform", "normal", "choice"])
                            .map(|s| format!("did you mean `{s}`?"))
                            .unwrap_or_else(|| "use a number, {uniform: [low, high]}, {normal: {mean, sd}} or {choice: [...]}".into());
                        reader.error_with_hint(node.location, &inner, "unknown distribution", hint);
                        return None;
                    }
                }
            }
            _ => {
                reader.error_with_hint(
                    node.location,
                    path,
                    format!(
                        "expected a number or a distribution, found {}",
                        node.kind_name()
                    ),
                    "use a number, {uniform: [low, high]}, {normal: {mean, sd}} or {choice: [...]}",
                );
                return None;
            }
        };
        param
            .check_bounds(node.location, path, bounds, reader)
            .then_some(param)
    }

    fn check_bounds(
        &self,
        location: Location,
        path: &str,
        bounds: Bounds,
        reader: &mut Reader,
    ) -> bool {
        let (low, high) = self.support();
        if bounds.allows(low) && bounds.allows(high) {
            return true;
        }
        let message = match self {
            Param::Fixed(x) => format!("{x} is outside the allowed range {}", bounds.describe()),
            Param::Normal { .. } => format!(
                "this distribution can draw values in [{low:.4}, {high:.4}], outside the allowed range {}",
                bounds.describe()
            ),
            _ => format!("values from {low} to {high} reach outside the allowed range {}", bounds.describe()),
        };
        match self {
            Param::Normal { .. } => {
                reader.error_with_hint(location, path, message, "add `min`/`max` to truncate it")
            }
            _ => reader.error(location, path, message),
        }
        false
    }
}

/// Reading params out of a mapping.
pub trait ParamFields {
    /// A required param within `bounds`.
    fn param(&mut self, key: &'static str, bounds: Bounds) -> Option<Param>;
    /// An optional param within `bounds`, `default` when absent.
    fn param_or(&mut self, key: &'static str, bounds: Bounds, default: f64) -> Param;
    /// An optional param, `None` when absent.
    fn param_opt(&mut self, key: &'static str, bounds: Bounds) -> Option<Param>;
}

impl ParamFields for Fields<'_, '_> {
    fn param(&mut self, key: &'static str, bounds: Bounds) -> Option<Param> {
        let path = self.path_of(key);
        match self.raw(key) {
            Some(node) => Param::read(node, &path, bounds, self.reader()),
            None => {
                let location = self.node().location;
                self.reader()
                    .error(location, &path, "missing required field");
                None
            }
        }
    }

    fn param_or(&mut self, key: &'static str, bounds: Bounds, default: f64) -> Param {
        self.param_opt(key, bounds).unwrap_or(Param::Fixed(default))
    }

    fn param_opt(&mut self, key: &'static str, bounds: Bounds) -> Option<Param> {
        let path = self.path_of(key);
        let node = self.raw(key)?;
        if node.value == Value::Null {
            return None;
        }
        Param::read(node, &path, bounds, self.reader())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use echobench_yaml_reader::{parse, Limits};
    use rand::SeedableRng;

    fn read(text: &str, bounds: Bounds) -> (Option<Param>, String) {
        let root = parse("p.yaml", text, &Limits::default()).unwrap();
        let mut reader = Reader::new("p.yaml");
        let node = root.get("x").unwrap();
        let param = Param::read(node, "x", bounds, &mut reader);
        (param, reader.finish().to_string())
    }

    #[test]
    fn forms_parse_and_draw_inside_their_support() {
        let mut rng = rand_chacha::ChaCha8Rng::from_seed([3; 32]);
        let (p, _) = read("x: {uniform: [1, 2]}", Bounds::POSITIVE);
        for _ in 0..100 {
            let v = p.as_ref().unwrap().draw(&mut rng);
            assert!((1.0..=2.0).contains(&v));
        }
        let (p, _) = read(
            "x: {normal: {mean: 1.4, sd: 0.2, min: 1.0}}",
            Bounds::POSITIVE,
        );
        for _ in 0..100 {
            let v = p.as_ref().unwrap().draw(&mut rng);
            assert!((1.0..=2.6).contains(&v));
        }
        let (p, _) = read("x: {choice: [3, 5]}", Bounds::POSITIVE);
        let v = p.unwrap().draw(&mut rng);
        assert!(v == 3.0 || v == 5.0);
        assert_eq!(read("x: 4", Bounds::POSITIVE).0, Some(Param::Fixed(4.0)));
    }

    #[test]
    fn impossible_supports_are_refused() {
        let (p, text) = read("x: -1", Bounds::POSITIVE);
        assert!(
            p.is_none() && text.contains("outside the allowed range (0, ∞]"),
            "{text}"
        );
        let (p, text) = read("x: {normal: {mean: 0.5, sd: 0.3}}", Bounds::POSITIVE);
        assert!(p.is_none() && text.contains("add `min`/`max`"), "{text}");
        let (p, text) = read("x: {uniform: [3, 1]}", Bounds::POSITIVE);
        assert!(p.is_none() && text.contains("above high end"), "{text}");
        let (p, text) = read("x: {unifrom: [1, 3]}", Bounds::POSITIVE);
        assert!(
            p.is_none() && text.contains("did you mean `uniform`?"),
            "{text}"
        );
    }
}
