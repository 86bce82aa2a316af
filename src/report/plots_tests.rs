//! The plots' unit tests: traces broken at the frame, log-axis labels, colours in grey and on white.

use super::*;

#[test]
fn a_trace_leaving_the_chart_is_broken_not_drawn_along_the_edge() {
    let pts = [(1.0, 0.0), (2.0, -50.0), (3.0, 1.0), (4.0, 2.0), (5.0, f64::NAN), (6.0, 3.0)];
    let r = runs(&pts, (-10.0, 10.0));
    assert_eq!(r, vec![vec![(1.0, 0.0)], vec![(3.0, 1.0), (4.0, 2.0)], vec![(6.0, 3.0)]]);
}

#[test]
fn a_log_axis_is_labelled_at_round_values() {
    // 4.5 to 17 ohm: 1 2 5 and 1 2 3 5 give too few; 1 2 3 4 5 6 8 gives 5, 6, 8, 10.
    assert_eq!(log_ticks(4.5, 17.0), vec![5.0, 6.0, 8.0, 10.0, 15.0]);
    assert_eq!(log_ticks(3.0, 60.0), vec![3.0, 5.0, 10.0, 20.0, 30.0, 50.0]);
    assert_eq!(log_ticks(2.0, 500.0), vec![2.0, 5.0, 10.0, 20.0, 50.0, 100.0, 200.0, 500.0]);
    assert!(log_ticks(0.0, 5.0).is_empty());
    // A top far above the last round label gets one more: 3 to 45 ohm stopped at 30 beside a
    // peak at 42 (a terminal sweep's plot); 40 is a third above 30, so it is added.
    assert_eq!(log_ticks(3.0, 45.0), vec![3.0, 5.0, 10.0, 20.0, 30.0, 40.0]);
    assert_eq!(log_ticks(3.0, 38.0), vec![3.0, 5.0, 10.0, 20.0, 30.0]);
    // The sweep sample's terminal plot stopped at 10 beside a peak near 15.
    assert_eq!(log_ticks(3.5, 17.0), vec![4.0, 5.0, 6.0, 8.0, 10.0, 15.0]);
}

#[test]
fn driver_colours_stay_apart_in_grey() {
    // Relative luminance (ITU-R BT.709 weights on linearised sRGB, IEC 61966-2-1): each
    // palette's colours differ by at least 0.08, so they read apart printed in grey.
    let lin = |c: u8| {
        let v = c as f64 / 255.0;
        if v <= 0.04045 {
            v / 12.92
        } else {
            ((v + 0.055) / 1.055).powf(2.4)
        }
    };
    let y = |c: &RGBColor| 0.2126 * lin(c.0) + 0.7152 * lin(c.1) + 0.0722 * lin(c.2);
    // Every colour at least 3:1 against white, the contrast WCAG 2.1 (1.4.11) asks of
    // graphics: (1 + 0.05) / (Y + 0.05).
    for c in palette(5) {
        assert!(1.05 / (y(&c) + 0.05) >= 3.0, "{c:?}: {:.2}:1 on white", 1.05 / (y(&c) + 0.05));
    }
    for n in 2..=4 {
        let p = palette(n);
        for i in 0..n {
            for j in i + 1..n {
                assert!((y(&p[i]) - y(&p[j])).abs() >= 0.08, "palette of {n}: colours {i} and {j} too close in grey");
            }
        }
    }
}
