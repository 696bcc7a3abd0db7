//! One-cycle DFT phasors, updated recursively.
//!
//! With `N` samples per nominal cycle the RMS fundamental phasor at sample `n`
//! is `X[n] = (√2/N)·Σ_{m=n−N+1..n} x[m]·e^(−jθm)`, `θ = 2π·fn/fs` (the
//! full-cycle DFT, e.g. Phadke & Thorp, *Computer Relaying for Power Systems*,
//! 2nd ed., ch. 4; the method of IEC 61400-21-1 for FRT tests). The sum is
//! updated in O(1) per sample by adding the newest and removing the oldest
//! term; the exact sum is recomputed from the window every
//! [`REFRESH_CYCLES`] cycles so rounding cannot drift.
//!
//! **Non-integer samples per cycle** (60 Hz at 10 kHz, 50 Hz at 12.8 kHz …):
//! the window holds `K = round(fs/fn)` samples, which is not a whole cycle, so
//! the plain sum mixes the phasor `c` with its mirror image:
//! `S = c·K + conj(c)·G`, with `G = Σ e^(−2jθm)` over the window (known
//! exactly). Solving the 2×2 system gives `c = (K·S − G·conj(S)) / (K² − |G|²)`,
//! which is exact for a steady sinusoid at nominal frequency whatever `K`.
//! When `fs/fn` is an integer, `G = 0` and this is the plain formula above.
//! The price of a fractional window: DC and harmonics are no longer rejected
//! exactly (a DC offset of `d` leaks about `d·|sin(πK·fn/fs)|/(K·sin(θ/2))`,
//! 2·10⁻³·d at 60 Hz and 10 kHz).

use num_complex::Complex64;

/// Cycles between exact recomputations of the running sums.
pub const REFRESH_CYCLES: usize = 64;

/// Sliding one-cycle DFT over several channels sampled together.
#[derive(Clone, Debug)]
pub struct SlidingDft {
    k: usize,
    chans: usize,
    theta: f64,
    /// `Σ_{i=0..K−1} e^(−2jθi)`; zero for a whole-cycle window.
    g0: Complex64,
    denom: f64,
    /// `e^(−jθm)` for `m mod K` when the window is a whole cycle.
    table: Option<Vec<Complex64>>,
    /// Window samples, channel by channel (`chans` runs of `k`), oldest at
    /// `pos` in each.
    ring: Vec<f64>,
    /// Rotation factor used for each sample in the window.
    rot: Vec<Complex64>,
    sums: Vec<Complex64>,
    pos: usize,
    n: u64,
    /// `n mod k`: the index into `table`.
    phase: usize,
    /// The rotations of a run (see [`SlidingDft::push_run`]).
    scratch: Vec<Complex64>,
    /// Samples pushed since the last reset (the window is full at `k`).
    fill: u64,
    since_refresh: usize,
    refresh_every: usize,
}

impl SlidingDft {
    /// `fs` sample rate and `fn` nominal frequency in Hz; `chans` channels.
    pub fn new(fs: f64, f_nom: f64, chans: usize) -> Self {
        let ratio = fs / f_nom;
        let k = (ratio.round() as usize).max(3);
        let theta = 2.0 * std::f64::consts::PI * f_nom / fs;
        let whole = (ratio - k as f64).abs() < 1e-9 * ratio;
        let (g0, table) = if whole {
            let table = (0..k)
                .map(|m| {
                    let a = -2.0 * std::f64::consts::PI * m as f64 / k as f64;
                    Complex64::new(a.cos(), a.sin())
                })
                .collect();
            (Complex64::new(0.0, 0.0), Some(table))
        } else {
            let g0 = (0..k)
                .map(|i| Complex64::from_polar(1.0, -2.0 * theta * i as f64))
                .sum::<Complex64>();
            (g0, None)
        };
        let denom = (k * k) as f64 - g0.norm_sqr();
        SlidingDft {
            k,
            chans,
            theta,
            g0,
            denom,
            table,
            ring: vec![0.0; k * chans],
            rot: vec![Complex64::new(0.0, 0.0); k],
            sums: vec![Complex64::new(0.0, 0.0); chans],
            pos: 0,
            n: 0,
            phase: 0,
            scratch: Vec::new(),
            fill: 0,
            since_refresh: 0,
            refresh_every: REFRESH_CYCLES * k,
        }
    }

    /// Forgets every sample: the window fills again from the next push.
    pub fn reset(&mut self) {
        self.ring.iter_mut().for_each(|x| *x = 0.0);
        self.rot
            .iter_mut()
            .for_each(|x| *x = Complex64::new(0.0, 0.0));
        self.sums
            .iter_mut()
            .for_each(|x| *x = Complex64::new(0.0, 0.0));
        self.pos = 0;
        self.since_refresh = 0;
        // `n` keeps counting: the rotation of a sample depends on its index.
        self.fill = 0;
    }

    /// Samples in the window.
    pub fn window(&self) -> usize {
        self.k
    }

    /// The oldest sample of channel `c` in the window: before the next
    /// [`push`](Self::push), the sample one window length earlier.
    #[inline]
    pub fn oldest(&self, c: usize) -> f64 {
        self.ring[c * self.k + self.pos]
    }

    /// True once the window is full and phasors are valid.
    pub fn ready(&self) -> bool {
        self.fill >= self.k as u64
    }

    #[inline]
    fn rotation(&self, m: u64) -> Complex64 {
        match &self.table {
            // `phase` is `m mod k`, kept as the samples come.
            Some(t) => t[self.phase],
            None => {
                // Non-integer samples per cycle: the angle of sample m is
                // computed from m directly (no accumulated rotation). Its
                // rounding grows with m: after 10^9 samples it is about
                // 1e-7 rad, far below what any check looks at.
                let a = -self.theta * m as f64;
                let (s, c) = a.sin_cos();
                Complex64::new(c, s)
            }
        }
    }

    /// Pushes one sample per channel (`x.len() == chans`).
    #[inline]
    pub fn push(&mut self, x: &[f64]) {
        let w = self.rotation(self.n);
        let w_old = self.rot[self.pos];
        for c in 0..self.chans {
            let at = c * self.k + self.pos;
            let old = self.ring[at];
            self.sums[c] += w * x[c] - w_old * old;
            self.ring[at] = x[c];
        }
        self.rot[self.pos] = w;
        self.pos += 1;
        if self.pos == self.k {
            self.pos = 0;
        }
        self.n += 1;
        self.phase += 1;
        if self.phase == self.k {
            self.phase = 0;
        }
        self.fill += 1;
        self.since_refresh += 1;
        if self.since_refresh >= self.refresh_every {
            self.refresh();
        }
    }

    /// Samples that can be pushed before the next refresh of the sums.
    pub fn until_refresh(&self) -> usize {
        self.refresh_every - self.since_refresh
    }

    /// Samples still to push before the window is full (0 when ready).
    pub fn until_ready(&self) -> usize {
        (self.k as u64).saturating_sub(self.fill) as usize
    }

    /// Pushes samples `range` of every channel (`cols[c][i] * scales[c]`)
    /// channel by channel: the same operations in the same order per
    /// channel as [`SlidingDft::push`] sample by sample, so the same sums.
    /// The run must not pass a refresh (see [`SlidingDft::until_refresh`]).
    /// With `deviation`, the largest |x − oldest| of the first three
    /// channels is folded into it (for a full window). Returns false when a
    /// running sum is not finite: a scaled sample of this run (or one still
    /// in the window) was not, or the sums overflowed.
    pub fn push_run(
        &mut self,
        cols: &[&[f64]],
        scales: &[f64],
        range: std::ops::Range<usize>,
        deviation: Option<&mut f64>,
    ) -> bool {
        let len = range.len();
        debug_assert!(len <= self.until_refresh() && cols.len() == self.chans);
        let mut rotations = std::mem::take(&mut self.scratch);
        rotations.clear();
        let mut phase = self.phase;
        for m in 0..len as u64 {
            rotations.push(match &self.table {
                Some(t) => t[phase],
                None => self.rotation(self.n + m),
            });
            phase += 1;
            if phase == self.k {
                phase = 0;
            }
        }
        let k = self.k;
        // The largest deviation so far, carried through the first three
        // channels.
        let mut dev = deviation.as_deref().copied();
        for (c, (col, scale)) in cols.iter().zip(scales).enumerate() {
            let xs = &col[range.clone()];
            let mut sum = self.sums[c];
            let track = c < 3 && dev.is_some();
            if len <= k {
                // Every oldest rotation is a stored one: slices up to the
                // ring's end and from its start, no index checks per sample.
                let mut d = dev.unwrap_or(0.0);
                let split = (k - self.pos).min(len);
                let ring = &mut self.ring;
                let (first, second) = (self.pos..self.pos + split, 0..len - split);
                for (ring_at, from) in [(first, 0), (second, split)] {
                    let n = ring_at.len();
                    let args = Lane {
                        xs: &xs[from..from + n],
                        rotations: &rotations[from..from + n],
                        slots: &mut ring[c * k + ring_at.start..c * k + ring_at.end],
                        stored: &self.rot[ring_at],
                        scale: *scale,
                    };
                    if track {
                        args.push::<true>(&mut sum, &mut d);
                    } else {
                        args.push::<false>(&mut sum, &mut d);
                    }
                }
                if track {
                    dev = Some(d);
                }
                self.sums[c] = sum;
                continue;
            }
            let mut pos = self.pos;
            for (j, (x, w)) in xs.iter().zip(rotations.iter()).enumerate() {
                let x = x * scale;
                let at = c * k + pos;
                let old = self.ring[at];
                if track {
                    if let Some(d) = &mut dev {
                        let dv = (x - old).abs();
                        if dv > *d {
                            *d = dv;
                        }
                    }
                }
                // The rotation stored k samples ago: this run's own when it
                // is longer than the window.
                let w_old = if j >= k {
                    rotations[j - k]
                } else {
                    self.rot[pos]
                };
                sum += w * x - w_old * old;
                self.ring[at] = x;
                pos += 1;
                if pos == k {
                    pos = 0;
                }
            }
            self.sums[c] = sum;
        }
        if let (Some(d), Some(out)) = (dev, deviation) {
            *out = d;
        }
        for w in rotations.iter() {
            self.rot[self.pos] = *w;
            self.pos += 1;
            if self.pos == self.k {
                self.pos = 0;
            }
        }
        self.scratch = rotations;
        self.n += len as u64;
        self.phase = phase;
        self.fill += len as u64;
        self.since_refresh += len;
        // A sum that took a value that is not finite stays so (NaN and
        // infinity absorb additions) until a refresh: read before it.
        let finite = self
            .sums
            .iter()
            .all(|s| s.re.is_finite() && s.im.is_finite());
        if self.since_refresh >= self.refresh_every {
            self.refresh();
        }
        finite
    }

    /// Recomputes the running sums exactly from the window.
    fn refresh(&mut self) {
        self.since_refresh = 0;
        for c in 0..self.chans {
            let mut s = Complex64::new(0.0, 0.0);
            for i in 0..self.k {
                s += self.rot[i] * self.ring[c * self.k + i];
            }
            self.sums[c] = s;
        }
    }

    /// RMS phasor of channel `c` for the window ending at the last sample.
    #[inline]
    pub fn phasor(&self, c: usize) -> Complex64 {
        let s = self.sums[c];
        let kf = self.k as f64;
        let coef = if self.table.is_some() {
            s / kf
        } else {
            // Window starts at the oldest sample, whose rotation is rot[pos].
            let w0 = self.rot[self.pos];
            let g = self.g0 * w0 * w0;
            (s * kf - g * s.conj()) / self.denom
        };
        coef * std::f64::consts::SQRT_2
    }
}

/// One channel's samples over a stretch of the ring that does not wrap.
struct Lane<'a> {
    xs: &'a [f64],
    /// Each new sample's rotation.
    rotations: &'a [Complex64],
    /// The channel's ring slots the samples go into.
    slots: &'a mut [f64],
    /// The rotation stored with each slot's oldest sample.
    stored: &'a [Complex64],
    scale: f64,
}

impl Lane<'_> {
    /// The operations of [`SlidingDft::push`] per sample, in its order.
    #[inline(always)]
    fn push<const TRACK: bool>(self, sum: &mut Complex64, dev: &mut f64) {
        let n = self.xs.len();
        let (rotations, slots, stored) = (
            &self.rotations[..n],
            &mut self.slots[..n],
            &self.stored[..n],
        );
        for i in 0..n {
            let x = self.xs[i] * self.scale;
            let old = slots[i];
            if TRACK {
                let dv = (x - old).abs();
                if dv > *dev {
                    *dev = dv;
                }
            }
            *sum += rotations[i] * x - stored[i] * old;
            slots[i] = x;
        }
    }
}

/// The same phasor computed directly from a slice of one window (the slow,
/// obviously correct oracle for tests): `first_index` is the absolute index
/// of `window[0]`.
pub fn direct_phasor(window: &[f64], first_index: u64, fs: f64, f_nom: f64) -> Complex64 {
    let theta = 2.0 * std::f64::consts::PI * f_nom / fs;
    let k = window.len() as f64;
    let s: Complex64 = window
        .iter()
        .enumerate()
        .map(|(i, x)| Complex64::from_polar(*x, -theta * (first_index + i as u64) as f64))
        .sum();
    let g: Complex64 = (0..window.len())
        .map(|i| Complex64::from_polar(1.0, -2.0 * theta * (first_index + i as u64) as f64))
        .sum();
    let c = (s * k - g * s.conj()) / (k * k - g.norm_sqr());
    c * std::f64::consts::SQRT_2
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn runs_give_the_sums_of_sample_by_sample() {
        // Whole-cycle (200 samples) and fractional (166.67) windows, runs of
        // every length up to a refresh, a window not yet full and a reset.
        for (fs, f) in [(10_000.0, 50.0), (10_000.0, 60.0)] {
            let n = 60_000;
            let cols: Vec<Vec<f64>> = (0..4)
                .map(|c| {
                    (0..n)
                        .map(|i| ((i * (c + 3)) as f64 * 0.0123).sin() * 100.0 + c as f64)
                        .collect()
                })
                .collect();
            let scales = [0.5, 2.0, 1.0 / 3.0, 7.0];
            let refs: Vec<&[f64]> = cols.iter().map(|c| c.as_slice()).collect();
            let mut one = SlidingDft::new(fs, f, 4);
            let mut runs = SlidingDft::new(fs, f, 4);
            let (mut dev_one, mut dev_runs) = (0.0f64, 0.0f64);
            let mut i = 0;
            let mut len = 1;
            while i < n {
                let run = len.min(runs.until_refresh()).min(n - i);
                let ready = runs.ready();
                for k in i..i + run {
                    let x: Vec<f64> = (0..4).map(|c| refs[c][k] * scales[c]).collect();
                    if one.ready() {
                        for c in 0..3 {
                            dev_one = dev_one.max((x[c] - one.oldest(c)).abs());
                        }
                    }
                    one.push(&x);
                }
                runs.push_run(&refs, &scales, i..i + run, ready.then_some(&mut dev_runs));
                for c in 0..4 {
                    assert_eq!(
                        one.phasor(c),
                        runs.phasor(c),
                        "{f} Hz, sample {i}, channel {c}"
                    );
                }
                i += run;
                len = len % 457 + 37;
                if i > 30_000 && i < 30_000 + 500 {
                    one.reset();
                    runs.reset();
                }
            }
            assert_eq!(dev_one, dev_runs);
            assert!(dev_runs > 0.0);
        }
    }

    #[test]
    fn sliding_matches_direct_after_many_refreshes() {
        // 50 Hz at 12.8 kHz: 256 samples per cycle, whole window.
        for (fs, f) in [(12_800.0, 50.0), (10_000.0, 60.0)] {
            let mut d = SlidingDft::new(fs, f, 1);
            let k = d.window();
            let xs: Vec<f64> = (0..(k * 200))
                .map(|i| (0.37 * i as f64).sin() + 0.2 * (i as f64 * 0.011).cos())
                .collect();
            for x in &xs {
                d.push(std::slice::from_ref(x));
            }
            let n = xs.len();
            let direct = direct_phasor(&xs[n - k..], (n - k) as u64, fs, f);
            assert!((d.phasor(0) - direct).norm() < 1e-10, "{fs} {f}");
        }
    }
}
