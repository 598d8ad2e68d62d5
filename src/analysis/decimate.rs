//! Thinning a long trace to what a plot can show: per pixel column of the visible time range,
//! the smallest and the largest sample, in the order they occur. A million-sample trace drawn
//! this way costs a few thousand points per frame and still shows every spike's peak.

/// Points `[t, y]` to draw for the samples of `(t, y)` inside `t_range = (lo, hi)` on a plot
/// `columns` pixels wide.
///
/// `t` must be sorted ascending (a trace's sample times are). When the visible samples are no
/// more than two per column they are returned as they are; otherwise each column contributes
/// its minimum and maximum, in time order. The nearest sample outside each end is kept too, so
/// that the line runs on to the plot's edges. Samples whose value is not finite are skipped.
pub fn decimate_min_max(t: &[f64], y: &[f64], t_range: (f64, f64), columns: usize) -> Vec<[f64; 2]> {
    let n = t.len().min(y.len());
    let (lo, hi) = t_range;
    if n == 0 || columns == 0 || lo.is_nan() || hi.is_nan() || lo > hi {
        return Vec::new();
    }
    let t = &t[..n];
    let first = t.partition_point(|&x| x < lo);
    let end = t.partition_point(|&x| x <= hi);
    let before = first.checked_sub(1);
    let after = (end < n).then_some(end);

    let mut out = Vec::with_capacity((2 * columns + 2).min(end - first + 2));
    let push = |k: usize, out: &mut Vec<[f64; 2]>| {
        if y[k].is_finite() {
            out.push([t[k], y[k]]);
        }
    };
    if let Some(k) = before {
        push(k, &mut out);
    }
    if end - first <= 2 * columns {
        for k in first..end {
            push(k, &mut out);
        }
    } else {
        let width = (hi - lo) / columns as f64;
        let column_of = |x: f64| {
            if width > 0.0 {
                (((x - lo) / width) as usize).min(columns - 1)
            } else {
                0
            }
        };
        // (column, index of min, index of max) of the column being filled.
        let mut current: Option<(usize, usize, usize)> = None;
        let flush = |c: Option<(usize, usize, usize)>, out: &mut Vec<[f64; 2]>| {
            if let Some((_, a, b)) = c {
                let (first_k, second_k) = if a <= b { (a, b) } else { (b, a) };
                out.push([t[first_k], y[first_k]]);
                if second_k != first_k {
                    out.push([t[second_k], y[second_k]]);
                }
            }
        };
        for k in first..end {
            let v = y[k];
            if !v.is_finite() {
                continue;
            }
            let col = column_of(t[k]);
            match &mut current {
                Some((c, kmin, kmax)) if *c == col => {
                    if v < y[*kmin] {
                        *kmin = k;
                    }
                    if v > y[*kmax] {
                        *kmax = k;
                    }
                }
                _ => {
                    flush(current, &mut out);
                    current = Some((col, k, k));
                }
            }
        }
        flush(current, &mut out);
    }
    if let Some(k) = after {
        push(k, &mut out);
    }
    out
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
        assert!(out.iter().any(|p| p[1] == 40.0 && p[0] == t[123_457]));
        assert!(out.iter().any(|p| p[1] == -95.0 && p[0] == t[54_321]));
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
}
