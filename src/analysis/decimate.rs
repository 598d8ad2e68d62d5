//! Thinning a long trace to what a plot can show: per pixel column of the visible time range,
//! the smallest and the largest sample, in the order they occur. A million-sample trace drawn
//! this way costs a few thousand points per frame and still shows every spike's peak.

/// Points `[t, y]` to draw for the samples of `(t, y)` inside `t_range = (lo, hi)` on a plot
/// `columns` pixels wide.
///
/// `t` must be sorted ascending (a trace's sample times are). When the visible samples are no
/// more than two per column they are returned as they are; otherwise each column contributes
/// its minimum and maximum, in time order, both at the column's centre. (At their own times
/// they would make sub-pixel segments of uneven length, which a line renderer draws with
/// visible gaps on steep flanks; half a pixel of time is not visible.) The nearest sample
/// outside each end is kept too, so that the line runs on to the plot's edges. Samples whose
/// value is not finite are skipped.
pub fn decimate_min_max(t: &[f64], y: &[f64], t_range: (f64, f64), columns: usize) -> Vec<[f64; 2]> {
    let mut d = Decimator::new(t_range, columns);
    d.update(t, y);
    d.points(t, y)
}

/// [`decimate_min_max`] kept up to date as samples are appended: each call to
/// [`Decimator::update`] looks only at the samples added since the last one, so a plot of a
/// growing trace costs the new samples plus one pass over the columns per frame.
#[derive(Debug, Clone, PartialEq)]
pub struct Decimator {
    lo: f64,
    hi: f64,
    columns: usize,
    /// Index of the first sample at or after `lo`, once seen.
    first: Option<usize>,
    /// Samples `..done` have been looked at.
    done: usize,
    /// Samples inside the range (finite or not).
    inside: usize,
    /// Per column: indices of its smallest and largest finite sample.
    extrema: Vec<Option<(usize, usize)>>,
}

impl Decimator {
    pub fn new(t_range: (f64, f64), columns: usize) -> Self {
        let (lo, hi) = t_range;
        let valid = columns > 0 && !lo.is_nan() && !hi.is_nan() && lo <= hi;
        let columns = if valid { columns } else { 0 };
        Self {
            lo,
            hi,
            columns,
            first: None,
            done: 0,
            inside: 0,
            extrema: vec![None; columns],
        }
    }

    /// Whether this decimator was made for this range and width.
    pub fn matches(&self, t_range: (f64, f64), columns: usize) -> bool {
        self.lo == t_range.0 && self.hi == t_range.1 && self.columns == columns
    }

    /// Samples looked at so far.
    pub fn done(&self) -> usize {
        self.done
    }

    fn column_of(&self, x: f64) -> usize {
        let width = (self.hi - self.lo) / self.columns as f64;
        if width > 0.0 {
            (((x - self.lo) / width) as usize).min(self.columns - 1)
        } else {
            0
        }
    }

    /// Takes in the samples appended since the last call (`t` sorted ascending).
    pub fn update(&mut self, t: &[f64], y: &[f64]) {
        let n = t.len().min(y.len());
        if self.columns == 0 || n <= self.done {
            self.done = self.done.max(n);
            return;
        }
        let start = if self.done == 0 {
            t[..n].partition_point(|&x| x < self.lo)
        } else {
            self.done
        };
        for k in start..n {
            let x = t[k];
            if x < self.lo {
                continue;
            }
            if x > self.hi {
                break;
            }
            self.first.get_or_insert(k);
            self.inside += 1;
            let v = y[k];
            if !v.is_finite() {
                continue;
            }
            let c = self.column_of(x);
            match &mut self.extrema[c] {
                Some((kmin, kmax)) => {
                    if v < y[*kmin] {
                        *kmin = k;
                    }
                    if v > y[*kmax] {
                        *kmax = k;
                    }
                }
                slot @ None => *slot = Some((k, k)),
            }
        }
        self.done = n;
    }

    /// The points to draw, from the same `t` and `y` the updates saw.
    pub fn points(&self, t: &[f64], y: &[f64]) -> Vec<[f64; 2]> {
        let n = self.done.min(t.len()).min(y.len());
        if self.columns == 0 || n == 0 {
            return Vec::new();
        }
        let first = self
            .first
            .unwrap_or_else(|| t[..n].partition_point(|&x| x < self.lo));
        let end = first + self.inside;
        let mut out = Vec::with_capacity((2 * self.columns + 2).min(self.inside + 2));
        let push = |k: usize, out: &mut Vec<[f64; 2]>| {
            if y[k].is_finite() {
                out.push([t[k], y[k]]);
            }
        };
        if let Some(k) = first.checked_sub(1) {
            push(k, &mut out);
        }
        if self.inside <= 2 * self.columns {
            for k in first..end {
                push(k, &mut out);
            }
        } else {
            let width = (self.hi - self.lo) / self.columns as f64;
            for (c, e) in self.extrema.iter().enumerate() {
                let Some((a, b)) = e else { continue };
                let x = self.lo + (c as f64 + 0.5) * width;
                let (p, q) = if a <= b { (*a, *b) } else { (*b, *a) };
                out.push([x, y[p]]);
                if q != p {
                    out.push([x, y[q]]);
                }
            }
        }
        if end < n {
            push(end, &mut out);
        }
        out
    }
}

/// The same envelope as [`Decimator`] for samples that are not kept: each sample is offered
/// once, as it is computed, and only the smallest and largest per column (with the first and
/// the last sample) are held, so a run of any length costs a fixed amount of memory. Used for a
/// figure of a run that streams its samples to a file.
#[derive(Debug, Clone, PartialEq)]
pub struct Envelope {
    lo: f64,
    hi: f64,
    /// Per column: the smallest and the largest finite sample, each as `[t, y]`.
    extrema: Vec<Option<([f64; 2], [f64; 2])>>,
    first: Option<[f64; 2]>,
    last: Option<[f64; 2]>,
}

impl Envelope {
    pub fn new(t_range: (f64, f64), columns: usize) -> Self {
        let (lo, hi) = t_range;
        let valid = !lo.is_nan() && !hi.is_nan() && lo <= hi;
        Self {
            lo,
            hi,
            extrema: vec![None; if valid { columns } else { 0 }],
            first: None,
            last: None,
        }
    }

    /// Takes in samples in time order.
    pub fn extend(&mut self, t: &[f64], y: &[f64]) {
        let columns = self.extrema.len();
        if columns == 0 {
            return;
        }
        let width = (self.hi - self.lo) / columns as f64;
        for (&x, &v) in t.iter().zip(y) {
            if !v.is_finite() || x < self.lo || x > self.hi {
                continue;
            }
            self.first.get_or_insert([x, v]);
            self.last = Some([x, v]);
            let c = if width > 0.0 {
                (((x - self.lo) / width) as usize).min(columns - 1)
            } else {
                0
            };
            match &mut self.extrema[c] {
                Some((min, max)) => {
                    if v < min[1] {
                        *min = [x, v];
                    }
                    if v > max[1] {
                        *max = [x, v];
                    }
                }
                slot @ None => *slot = Some(([x, v], [x, v])),
            }
        }
    }

    /// The points held, in time order: the first sample, each column's extremes, the last.
    pub fn points(&self) -> (Vec<f64>, Vec<f64>) {
        let mut pts: Vec<[f64; 2]> = Vec::with_capacity(2 * self.extrema.len() + 2);
        pts.extend(self.first);
        for (a, b) in self.extrema.iter().flatten() {
            let (a, b) = if a[0] <= b[0] { (a, b) } else { (b, a) };
            pts.push(*a);
            if b != a {
                pts.push(*b);
            }
        }
        pts.extend(self.last);
        pts.dedup();
        pts.into_iter().map(|[t, y]| (t, y)).unzip()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ramp(n: usize) -> (Vec<f64>, Vec<f64>) {
        let t: Vec<f64> = (0..n).map(|k| k as f64 * 0.1).collect();
        let y: Vec<f64> = t.iter().map(|x| (x * 0.7).sin() * 50.0 - 60.0).collect();
        (t, y)
    }

    #[test]
    fn short_traces_come_back_unchanged() {
        let (t, y) = ramp(50);
        let out = decimate_min_max(&t, &y, (0.0, 10.0), 100);
        assert_eq!(out.len(), 50);
        for (k, p) in out.iter().enumerate() {
            assert_eq!(*p, [t[k], y[k]]);
        }
    }

    #[test]
    fn long_traces_shrink_to_two_points_per_column_plus_ends() {
        let (t, y) = ramp(1_000_000);
        let out = decimate_min_max(&t, &y, (1000.0, 2000.0), 800);
        assert!(out.len() <= 2 * 800 + 2, "{} points", out.len());
        assert!(out.len() >= 800, "{} points", out.len());
    }

    #[test]
    fn every_column_keeps_its_extremes() {
        // A narrow spike in an otherwise flat trace must survive: it is what a user looks for.
        let n = 200_000;
        let t: Vec<f64> = (0..n).map(|k| k as f64 * 0.01).collect();
        let mut y = vec![-70.0; n];
        y[123_457] = 40.0;
        y[54_321] = -95.0;
        let out = decimate_min_max(&t, &y, (0.0, 2000.0), 300);
        // Within half a column (2000/300/2 ms) of where they happened.
        let near = |p: &[f64; 2], k: usize| (p[0] - t[k]).abs() <= 2000.0 / 300.0 / 2.0;
        assert!(out.iter().any(|p| p[1] == 40.0 && near(p, 123_457)));
        assert!(out.iter().any(|p| p[1] == -95.0 && near(p, 54_321)));
    }

    #[test]
    fn points_stay_in_time_order_and_cover_the_edges() {
        let (t, y) = ramp(100_000);
        let out = decimate_min_max(&t, &y, (2500.0, 7500.0), 400);
        assert!(out.windows(2).all(|w| w[0][0] <= w[1][0]));
        // One sample beyond each end, so the line reaches the plot's borders.
        assert!(out[0][0] < 2500.0);
        assert!(out[out.len() - 1][0] > 7500.0);
    }

    #[test]
    fn empty_range_and_degenerate_inputs() {
        let (t, y) = ramp(1000);
        // A range after the data keeps only the last sample (to draw up to the edge).
        let out = decimate_min_max(&t, &y, (500.0, 600.0), 100);
        assert_eq!(out, vec![[t[999], y[999]]]);
        assert!(decimate_min_max(&t, &y, (0.0, 10.0), 0).is_empty());
        assert!(decimate_min_max(&[], &[], (0.0, 10.0), 10).is_empty());
        assert!(decimate_min_max(&t, &y, (10.0, 0.0), 10).is_empty());
    }

    #[test]
    fn growing_traces_give_the_same_points_as_one_pass() {
        let (t, y) = ramp(300_000);
        let range = (1000.0, 25_000.0);
        let mut d = Decimator::new(range, 500);
        for n in [0, 1, 7, 9_999, 10_000, 123_456, 250_001, 300_000] {
            d.update(&t[..n], &y[..n]);
            assert_eq!(
                d.points(&t[..n], &y[..n]),
                decimate_min_max(&t[..n], &y[..n], range, 500),
                "n = {n}"
            );
        }
        assert!(d.matches(range, 500) && !d.matches(range, 501));
        assert_eq!(d.done(), 300_000);
    }

    #[test]
    fn values_that_are_not_finite_are_skipped() {
        let t: Vec<f64> = (0..10_000).map(f64::from).collect();
        let y: Vec<f64> = (0..10_000)
            .map(|k| if k % 3 == 0 { f64::NAN } else { f64::from(k) })
            .collect();
        let out = decimate_min_max(&t, &y, (0.0, 9999.0), 50);
        assert!(out.iter().all(|p| p[1].is_finite()));
        let short = decimate_min_max(&t[..9], &y[..9], (0.0, 9.0), 50);
        assert_eq!(short.len(), 6);
    }

    /// The envelope fed chunk by chunk keeps, per column, the same extreme values as thinning
    /// the whole trace at once, at their own times, and no more than two points a column.
    #[test]
    fn an_envelope_of_streamed_chunks_keeps_each_columns_extremes() {
        let (t, y) = ramp(300_000);
        let range = (0.0, t[t.len() - 1]);
        let mut env = Envelope::new(range, 500);
        for chunk in (0..t.len()).step_by(4096) {
            let end = (chunk + 4096).min(t.len());
            env.extend(&t[chunk..end], &y[chunk..end]);
        }
        let (et, ey) = env.points();
        assert!(et.len() <= 2 * 500 + 2, "{}", et.len());
        assert!(et.windows(2).all(|w| w[0] <= w[1]), "in time order");
        assert_eq!((et[0], ey[0]), (t[0], y[0]), "the first sample");
        assert_eq!(et.last(), t.last(), "the last sample");
        let whole = decimate_min_max(&t, &y, range, 500);
        let lowest = |v: &[f64]| v.iter().copied().fold(f64::INFINITY, f64::min);
        let highest = |v: &[f64]| v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let wy: Vec<f64> = whole.iter().map(|p| p[1]).collect();
        assert_eq!(lowest(&ey), lowest(&wy));
        assert_eq!(highest(&ey), highest(&wy));
        // Each envelope point is a real sample.
        for (a, b) in et.iter().zip(&ey) {
            let k = t.partition_point(|x| x < a);
            assert_eq!(y[k], *b);
        }
    }
}
