//! Derived quantities located on the solver's own steps: the maximum of a quantity and the
//! first time it crosses a value, found on the BDF interpolant between accepted steps, so
//! that they are accurate to the integration tolerance whatever the output grid.
//!
//! After every accepted step the watcher evaluates each quantity at the step's end. A
//! maximum is refined when a step-end value that beats every earlier one is followed by a
//! lower one: the maximum then lies between the two step ends around it, and a golden-section
//! search on the solver's interpolating polynomial (which passes through the last `order + 1`
//! accepted states) places it to 1e-10 of that bracket. A crossing is refined by bisection on
//! the interpolant over the step in which the quantity changed side. Output times play no
//! part, so two runs that differ only in their output grid give the same answers.

/// A scalar quantity of the solution.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Quantity {
    /// Concentration of species `.0` (mechanism index), mol/m3.
    Concentration(usize),
    /// Temperature, K.
    Temperature,
    /// dT/dt from the model's equations, K/s.
    TemperatureRate,
    /// Net rate of progress (forward minus reverse) of step `.0` (mechanism index) at the
    /// state, mol/(m3 s), with the rate constants the equations use there (temperature,
    /// pressure factors, photolysis J(t)).
    StepRate(usize),
}

/// What to locate on the solver's steps.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Watch {
    /// The largest value of the quantity over the run and its time.
    Maximum(Quantity),
    /// The first time the quantity reaches `value` (in its own unit) from the side it
    /// starts on.
    Crossing {
        /// The quantity.
        quantity: Quantity,
        /// The level (mol/m3, K or K/s as the quantity).
        value: f64,
    },
    /// The time integral of the quantity from the start to the end of the run (its unit
    /// times s), by three-point Gauss-Legendre quadrature of the solver's interpolant on
    /// every step: exact for the interpolating polynomials of BDF orders up to 5, hence
    /// accurate to the integration tolerance whatever the output grid.
    Integral(Quantity),
    /// The time integral of the quantity over the window `[from_s, to_s]` (s) only (its
    /// unit times s): the quadrature of [`Watch::Integral`] on the part of each solver step
    /// that lies inside the window. A window reaching past the end of the run integrates up
    /// to the end reached; `Located::time_s` then tells how far.
    WindowIntegral {
        /// The quantity.
        quantity: Quantity,
        /// Start of the window, s.
        from_s: f64,
        /// End of the window, s (at least `from_s`).
        to_s: f64,
    },
}

impl Watch {
    /// The quantity watched.
    pub fn quantity(&self) -> Quantity {
        match *self {
            Watch::Maximum(q) => q,
            Watch::Crossing { quantity, .. } => quantity,
            Watch::Integral(q) => q,
            Watch::WindowIntegral { quantity, .. } => quantity,
        }
    }
}

/// Where a watched quantity was found.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Located {
    /// Time (s).
    pub time_s: f64,
    /// Value of the quantity there (its unit).
    pub value: f64,
    /// For an integral: `time_s` is the end of the integration so far and `value` the
    /// integral up to it.
    ///
    /// For a maximum: `true` when it lies strictly inside the run (the quantity rose to it
    /// and fell after it), `false` when the largest value is at the first or last time.
    /// Always `true` for a crossing.
    pub interior: bool,
}

/// Relative width (of the bracket) to which maxima and crossings are refined.
const REFINE_RELATIVE_WIDTH: f64 = 1e-10;

/// Progress of one watch.
#[derive(Debug, Clone)]
struct WatchState {
    watch: Watch,
    /// The last two step ends (time, value), most recent last.
    previous: Option<(f64, f64)>,
    before_previous: Option<(f64, f64)>,
    /// Crossing: whether the quantity started at or above the level.
    started_above: Option<bool>,
    found: Option<Located>,
}

/// The watches of one run and what they found.
#[derive(Debug, Clone, Default)]
pub(crate) struct Watcher {
    states: Vec<WatchState>,
}

impl Watcher {
    pub(crate) fn new(watches: &[Watch]) -> Watcher {
        Watcher {
            states: watches
                .iter()
                .map(|&watch| WatchState {
                    watch,
                    previous: None,
                    before_previous: None,
                    started_above: None,
                    found: None,
                })
                .collect(),
        }
    }

    pub(crate) fn is_empty(&self) -> bool {
        self.states.is_empty()
    }

    /// Records the initial state at `t_s`; `value(q)` is the quantity there.
    pub(crate) fn start(&mut self, t_s: f64, value: &mut dyn FnMut(Quantity) -> f64) {
        for s in &mut self.states {
            let v = value(s.watch.quantity());
            s.previous = Some((t_s, v));
            s.before_previous = None;
            match s.watch {
                Watch::Maximum(_) => {
                    s.found = Some(Located {
                        time_s: t_s,
                        value: v,
                        interior: false,
                    })
                }
                Watch::Crossing { value: level, .. } => s.started_above = Some(v >= level),
                Watch::Integral(_) => {
                    s.found = Some(Located {
                        time_s: t_s,
                        value: 0.0,
                        interior: true,
                    })
                }
                Watch::WindowIntegral { from_s, .. } => {
                    s.found = Some(Located {
                        time_s: from_s.max(t_s),
                        value: 0.0,
                        interior: true,
                    })
                }
            }
        }
    }

    /// After an accepted step ending at `t_s`: `at(t, q)` evaluates quantity `q` at any time
    /// `t` covered by the solver's current interpolant (at least back to the end of the step
    /// before this one).
    pub(crate) fn after_step(&mut self, t_s: f64, at: &mut dyn FnMut(f64, Quantity) -> f64) {
        for s in &mut self.states {
            let q = s.watch.quantity();
            let v = at(t_s, q);
            let Some((tp, vp)) = s.previous else {
                s.previous = Some((t_s, v));
                continue;
            };
            match s.watch {
                Watch::Maximum(_) => {
                    let best = s.found.map_or(f64::NEG_INFINITY, |f| f.value);
                    // A step end that beat everything before it, followed by a lower value:
                    // the maximum lies between the step ends around it.
                    if vp >= best && v < vp && tp < t_s {
                        let left = s.before_previous.map_or(tp, |(t, _)| t);
                        let (time_s, value) =
                            golden_maximum(left, t_s, &mut |t| at(t, q), (tp, vp));
                        s.found = Some(Located {
                            time_s,
                            value,
                            interior: true,
                        });
                    } else if v > best.max(vp) {
                        // Still rising: the end of the run so far is the largest value.
                        s.found = Some(Located {
                            time_s: t_s,
                            value: v,
                            interior: false,
                        });
                    }
                }
                Watch::Integral(_) => {
                    if tp < t_s {
                        let sum = s.found.map_or(0.0, |f| f.value)
                            + gauss_legendre_3(tp, t_s, &mut |t| at(t, q));
                        s.found = Some(Located {
                            time_s: t_s,
                            value: sum,
                            interior: true,
                        });
                    }
                }
                Watch::WindowIntegral { from_s, to_s, .. } => {
                    // The part of the step [tp, t_s] inside the window.
                    let (a, b) = (tp.max(from_s), t_s.min(to_s));
                    if a < b {
                        let sum = s.found.map_or(0.0, |f| f.value)
                            + gauss_legendre_3(a, b, &mut |t| at(t, q));
                        s.found = Some(Located {
                            time_s: b,
                            value: sum,
                            interior: true,
                        });
                    }
                }
                Watch::Crossing { value: level, .. } => {
                    let above = s.started_above.unwrap_or(vp >= level);
                    let crossed = if above { v <= level } else { v >= level };
                    if s.found.is_none() && crossed && tp < t_s {
                        let time_s = bisect_crossing(tp, t_s, level, above, &mut |t| at(t, q));
                        s.found = Some(Located {
                            time_s,
                            value: level,
                            interior: true,
                        });
                    }
                }
            }
            s.before_previous = s.previous;
            s.previous = Some((t_s, v));
        }
    }

    /// The solver restarted (at first order, with a new interpolant): forget the step end
    /// before the last, which the new interpolant does not cover.
    pub(crate) fn restarted(&mut self) {
        for s in &mut self.states {
            s.before_previous = None;
        }
    }

    /// Each watch with what it found (`None`: a crossing never reached).
    pub(crate) fn results(&self) -> Vec<(Watch, Option<Located>)> {
        self.states.iter().map(|s| (s.watch, s.found)).collect()
    }
}

/// The integral of `f` over `[a, b]` by three-point Gauss-Legendre quadrature (exact for
/// polynomials of degree up to 5; nodes 0 and +-sqrt(3/5), weights 8/9 and 5/9 on [-1, 1],
/// Abramowitz and Stegun, Handbook of Mathematical Functions, table 25.4).
pub(crate) fn gauss_legendre_3(a: f64, b: f64, f: &mut dyn FnMut(f64) -> f64) -> f64 {
    let half = 0.5 * (b - a);
    let mid = 0.5 * (a + b);
    let x = (0.6f64).sqrt() * half;
    half * (8.0 / 9.0 * f(mid) + 5.0 / 9.0 * (f(mid - x) + f(mid + x)))
}

/// The nodes and weights of [`gauss_legendre_3`] on `[a, b]` (for vector integrands).
pub(crate) fn gauss_legendre_3_nodes(a: f64, b: f64) -> [(f64, f64); 3] {
    let half = 0.5 * (b - a);
    let mid = 0.5 * (a + b);
    let x = (0.6f64).sqrt() * half;
    [
        (mid - x, half * 5.0 / 9.0),
        (mid, half * 8.0 / 9.0),
        (mid + x, half * 5.0 / 9.0),
    ]
}

/// The maximum of `f` on `[a, b]` by golden-section search, starting from the known point
/// `inside` (the largest sampled value); returns (time, value), never worse than `inside`.
fn golden_maximum(a: f64, b: f64, f: &mut dyn FnMut(f64) -> f64, inside: (f64, f64)) -> (f64, f64) {
    const INV_PHI: f64 = 0.618_033_988_749_894_8;
    let (mut lo, mut hi) = (a, b);
    let width = (b - a).abs();
    let mut x1 = hi - INV_PHI * (hi - lo);
    let mut x2 = lo + INV_PHI * (hi - lo);
    let (mut f1, mut f2) = (f(x1), f(x2));
    let mut best = inside;
    for _ in 0..200 {
        if (hi - lo) <= REFINE_RELATIVE_WIDTH * width {
            break;
        }
        if f1.is_nan() || f2.is_nan() {
            break;
        }
        if f1 >= f2 {
            hi = x2;
            x2 = x1;
            f2 = f1;
            x1 = hi - INV_PHI * (hi - lo);
            f1 = f(x1);
        } else {
            lo = x1;
            x1 = x2;
            f1 = f2;
            x2 = lo + INV_PHI * (hi - lo);
            f2 = f(x2);
        }
    }
    for (x, v) in [(x1, f1), (x2, f2)] {
        if v > best.1 {
            best = (x, v);
        }
    }
    best
}

/// The time in `[a, b]` where `f` reaches `level`, by bisection (`f(a)` on the side given by
/// `above`, `f(b)` on the other side or at the level).
fn bisect_crossing(a: f64, b: f64, level: f64, above: bool, f: &mut dyn FnMut(f64) -> f64) -> f64 {
    let (mut lo, mut hi) = (a, b);
    let width = b - a;
    for _ in 0..200 {
        if hi - lo <= REFINE_RELATIVE_WIDTH * width {
            break;
        }
        let mid = 0.5 * (lo + hi);
        let v = f(mid);
        let reached = if above { v <= level } else { v >= level };
        if reached {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    hi
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn golden_search_finds_the_vertex_of_a_parabola() {
        // -(t - 0.3)^2 on [0, 1]: the maximum is at 0.3 exactly (closed form).
        let mut f = |t: f64| -(t - 0.3) * (t - 0.3);
        let (t, v) = golden_maximum(0.0, 1.0, &mut f, (0.25, -0.0025));
        assert!((t - 0.3).abs() < 1e-8, "{t}");
        assert!(v.abs() < 1e-15);
    }

    #[test]
    fn bisection_finds_the_root_of_a_line() {
        // 2 t - 1 reaches 0 at t = 0.5 (closed form), rising from below.
        let t = bisect_crossing(0.0, 1.0, 0.0, false, &mut |t| 2.0 * t - 1.0);
        assert!((t - 0.5).abs() < 1e-9, "{t}");
    }

    #[test]
    fn watcher_locates_a_peak_between_coarse_step_ends() {
        // A Gaussian peak at t = 1.234 sampled at "step ends" 0.5 apart; the evaluator is the
        // exact function, so the located peak must be the exact one.
        let g = |t: f64| (-(t - 1.234f64).powi(2)).exp();
        let mut w = Watcher::new(&[
            Watch::Maximum(Quantity::Temperature),
            Watch::Crossing {
                quantity: Quantity::Temperature,
                value: 0.5,
            },
        ]);
        w.start(0.0, &mut |_| g(0.0));
        for i in 1..=8 {
            let t = 0.5 * i as f64;
            w.after_step(t, &mut |t, _| g(t));
        }
        let results = w.results();
        let peak = results[0].1.unwrap();
        assert!((peak.time_s - 1.234).abs() < 1e-8, "{peak:?}");
        assert!(peak.interior);
        // exp(-(t - 1.234)^2) = 0.5 at t = 1.234 - sqrt(ln 2) (closed form).
        let crossing = results[1].1.unwrap();
        let expected = 1.234 - std::f64::consts::LN_2.sqrt();
        assert!((crossing.time_s - expected).abs() < 1e-9, "{crossing:?}");
    }

    #[test]
    fn a_window_integral_takes_only_the_part_of_each_step_inside_the_window() {
        // The integral of t^2 over [0.3, 2.7] is (2.7^3 - 0.3^3) / 3 = 6.552 (closed form);
        // the window cuts the first and last steps of width 1.
        let window = Watch::WindowIntegral {
            quantity: Quantity::Temperature,
            from_s: 0.3,
            to_s: 2.7,
        };
        let mut w = Watcher::new(&[window]);
        w.start(0.0, &mut |_| 0.0);
        for i in 1..=4 {
            w.after_step(i as f64, &mut |t, _| t * t);
        }
        let found = w.results()[0].1.unwrap();
        assert!((found.value - 6.552).abs() < 1e-12, "{found:?}");
        assert_eq!(found.time_s, 2.7);
    }

    #[test]
    fn a_rising_quantity_has_its_maximum_at_the_end() {
        let mut w = Watcher::new(&[Watch::Maximum(Quantity::Temperature)]);
        w.start(0.0, &mut |_| 0.0);
        for i in 1..=4 {
            w.after_step(i as f64, &mut |t, _| t * t);
        }
        let peak = w.results()[0].1.unwrap();
        assert_eq!((peak.time_s, peak.value, peak.interior), (4.0, 16.0, false));
    }
}
