//! Axis helpers for the plots: round labels on a logarithmic axis and a range with room.

/// Round values to label a logarithmic axis from `lo` to `hi`: the first of the steps per
/// decade (1 2 5; 1 2 3 5; 1 2 3 4 5 6 8; and with 1.5) that gives at least five labels.
pub(super) fn log_ticks(lo: f64, hi: f64) -> Vec<f64> {
    let steps: [&[f64]; 4] = [&[1.0, 2.0, 5.0], &[1.0, 2.0, 3.0, 5.0], &[1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 8.0], &[1.0, 1.5, 2.0, 3.0, 4.0, 5.0, 6.0, 8.0]];
    if !(lo > 0.0 && hi > lo && lo.is_finite() && hi.is_finite()) {
        return Vec::new();
    }
    let mut last = Vec::new();
    for set in steps {
        let mut ticks = Vec::new();
        let mut decade = 10f64.powf(lo.log10().floor());
        while decade <= hi {
            for m in set {
                let v = m * decade;
                if v >= lo && v <= hi {
                    ticks.push(v);
                }
            }
            decade *= 10.0;
        }
        if ticks.len() >= 5 {
            return top_up(ticks, hi);
        }
        last = ticks;
    }
    top_up(last, hi)
}

/// Adds a label above the last when the axis runs on well past it (3 to 45 ohm labelled 3, 5,
/// 10, 20, 30 leaves a peak at 42 beside no figure): the largest round value (1 1.5 2 3 4 5
/// 6 8 per decade) below the top, if it is at least a third above the last label, so the two
/// never crowd.
fn top_up(mut ticks: Vec<f64>, hi: f64) -> Vec<f64> {
    let Some(&last) = ticks.last() else { return ticks };
    let decade = 10f64.powf(hi.log10().floor());
    let top = [8.0, 6.0, 5.0, 4.0, 3.0, 2.0, 1.5, 1.0].iter().map(|m| m * decade).find(|v| *v <= hi * (1.0 + 1e-12));
    if let Some(t) = top {
        if t >= last * 4.0 / 3.0 {
            ticks.push(t);
        }
    }
    ticks
}

/// A range covering `values` with room above and below (at least a tenth of the span, and of
/// `min_span`), so a trace never lies on the frame.
pub(super) fn range(values: impl Iterator<Item = f64>, min_span: f64) -> (f64, f64) {
    let (lo, hi) = values.filter(|v| v.is_finite()).fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| (a.min(v), b.max(v)));
    if !lo.is_finite() {
        return (-1.0, 1.0);
    }
    let span = (hi - lo).max(min_span);
    let mid = (hi + lo) / 2.0;
    let pad = 0.1 * span;
    (mid - span / 2.0 - pad, mid + span / 2.0 + pad)
}
