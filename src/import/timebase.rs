//! The time base every importer checks: time increases from sample to
//! sample, in even steps within the tolerance of the nominal step, and
//! starts at zero. Each importer says the problems in its own terms (a CSV
//! line, a COMTRADE sample number).

/// The nominal step of a recording from its first times: the median of
/// the positive finite steps (robust against a gap or a repeated sample
/// among them; those are reported by the step check with their place).
pub(crate) fn median_step(times: &[f64]) -> Option<f64> {
    let mut steps: Vec<f64> = times
        .windows(2)
        .map(|w| w[1] - w[0])
        .filter(|d| *d > 0.0 && d.is_finite())
        .collect();
    steps.sort_by(f64::total_cmp);
    steps.get(steps.len() / 2).copied()
}

/// What is wrong with one step.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) enum StepProblem {
    /// The time repeats (`step == 0`) or goes back.
    NotIncreasing { t: f64, prev: f64 },
    /// The step is off the nominal one by more than the tolerance.
    Uneven {
        step: f64,
        nominal: f64,
        deviation: f64,
        tolerance: f64,
    },
}

/// The sequential step check across the samples of one recording.
#[derive(Clone, Debug)]
pub(crate) struct StepCheck {
    nominal: f64,
    tolerance: f64,
    first: Option<f64>,
    prev: f64,
    /// Largest relative deviation of a step from the nominal step so far.
    pub max_deviation: f64,
}

impl StepCheck {
    pub fn new(nominal: f64, tolerance: f64) -> Self {
        StepCheck {
            nominal,
            tolerance,
            first: None,
            prev: f64::NAN,
            max_deviation: 0.0,
        }
    }

    /// Takes the next raw time and returns it from the first sample on.
    pub fn next(&mut self, raw: f64) -> Result<f64, StepProblem> {
        let first = match self.first {
            None => *self.first.insert(raw),
            Some(f) => {
                let step = raw - self.prev;
                if !(step > 0.0) {
                    return Err(StepProblem::NotIncreasing {
                        t: raw,
                        prev: self.prev,
                    });
                }
                let deviation = (step - self.nominal).abs() / self.nominal;
                self.max_deviation = self.max_deviation.max(deviation);
                if !(deviation <= self.tolerance) {
                    return Err(StepProblem::Uneven {
                        step,
                        nominal: self.nominal,
                        deviation,
                        tolerance: self.tolerance,
                    });
                }
                f
            }
        };
        self.prev = raw;
        Ok(raw - first)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Check values by hand arithmetic (common practice: a step check relative
    // to the nominal step).
    #[test]
    fn steps_are_checked_against_the_nominal() {
        let mut c = StepCheck::new(0.001, 0.1);
        assert_eq!(c.next(5.0), Ok(0.0));
        assert!((c.next(5.001).unwrap() - 0.001).abs() < 1e-12);
        // 1.05 ms: 5 % off, inside 10 %.
        assert!(c.next(5.00205).is_ok());
        assert!((c.max_deviation - 0.05).abs() < 1e-6);
        assert!(matches!(
            c.next(5.00205),
            Err(StepProblem::NotIncreasing { .. })
        ));
        // 1.2 ms: 20 % off.
        assert!(matches!(c.next(5.00325), Err(StepProblem::Uneven { .. })));
    }

    #[test]
    fn the_median_step_ignores_a_gap_and_a_repeat() {
        let t = [0.0, 1.0, 2.0, 2.0, 3.0, 10.0, 11.0];
        assert_eq!(median_step(&t), Some(1.0));
        assert_eq!(median_step(&[1.0]), None);
    }
}
