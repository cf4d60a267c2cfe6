//! Multi-pad panels: strongest-pad and ambient rules, multi-touch.
#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

mod support;

use humsense::{Config, Event, EventKind, PanelMode};
use support::{press, render_panel, run_panel};

/// Leakage through a shared overlay: 10–20 % of a touched pad's rise
/// reaches each neighbour (a design figure without a single source: common
/// practice); 15 % here.
const LEAK: f64 = 0.15;

/// Ambient amplitude of pad `ch` (pads differ a little, as real ones do).
fn ambient(ch: usize) -> f64 {
    22.0 + 3.0 * (ch % 3) as f64
}

/// Hum on pad `ch` at `t` for touches `(pad, start, end)` of gain `gain`,
/// with leakage into the two neighbours and a common ambient factor.
fn panel_amp(ch: usize, t: f64, touches: &[(usize, f64, f64)], gain: f64, common: f64) -> f64 {
    let mut a = ambient(ch) * common;
    for &(pad, s, e) in touches {
        let rise = press(t, ambient(pad), gain, &[(s, e)]) - ambient(pad);
        if pad == ch {
            a += rise;
        } else if pad.abs_diff(ch) == 1 {
            a += LEAK * rise;
        }
    }
    a
}

/// Touch events per pad, as (on time, off time) pairs; panics on any other
/// event or an unpaired on/off.
fn touches_by_pad(ev: &[(f64, Event)], pads: usize) -> Vec<Vec<(f64, f64)>> {
    let mut out = vec![Vec::new(); pads];
    let mut open: Vec<Option<f64>> = vec![None; pads];
    for (t, e) in ev {
        let ch = e.channel as usize;
        match e.kind {
            EventKind::TouchOn => {
                assert!(open[ch].is_none(), "double on, pad {ch} at {t}: {ev:?}");
                open[ch] = Some(*t);
            }
            EventKind::TouchOff => {
                let on = open[ch]
                    .take()
                    .unwrap_or_else(|| panic!("off without on, pad {ch} at {t}"));
                out[ch].push((on, *t));
            }
            other => panic!("unexpected event {other:?} on pad {ch} at {t}"),
        }
    }
    assert!(
        open.iter().all(Option::is_none),
        "unclosed touches: {open:?}"
    );
    out
}

/// Each touch must be reported once, on its pad only, on within 150 ms of
/// the press (or of `settle`, for a touch that starts during an ambient
/// change) and off within 150 ms of the release.
fn check(got: &[Vec<(f64, f64)>], touches: &[(usize, f64, f64)]) {
    for (pad, list) in got.iter().enumerate() {
        let want: Vec<_> = touches.iter().filter(|t| t.0 == pad).collect();
        assert_eq!(
            list.len(),
            want.len(),
            "pad {pad}: got {list:?}, want {want:?}"
        );
        for ((on, off), (_, s, e)) in list.iter().zip(want) {
            assert!(
                *on >= *s && *on - s < 0.150,
                "pad {pad}: on at {on} for press at {s}"
            );
            assert!(
                *off >= *e && *off - e < 0.150,
                "pad {pad}: off at {off} for release at {e}"
            );
        }
    }
}

fn every_pad_once(pads: usize) {
    // Each pad touched twice (20x: a direct touch), one pad at a time.
    let mut touches = Vec::new();
    for round in 0..2 {
        for pad in 0..pads {
            let s = 1.0 + (round * pads + pad) as f64 * 0.8;
            touches.push((pad, s, s + 0.4));
        }
    }
    let seconds = touches.last().map_or(0.0, |t| t.2) + 1.0;
    let x = render_panel(pads, 2000.0, seconds, 4, |ch, t| {
        panel_amp(ch, t, &touches, 20.0, 1.0)
    });
    let ev = match pads {
        4 => run_panel::<4>(Config::touch(), &x),
        _ => run_panel::<8>(Config::touch(), &x),
    };
    check(&touches_by_pad(&ev, pads), &touches);
}

#[test]
fn four_pads_every_touch_once_on_its_pad_only() {
    every_pad_once(4);
}

#[test]
fn eight_pads_every_touch_once_on_its_pad_only() {
    every_pad_once(8);
}

#[test]
fn leakage_alone_would_be_a_touch_without_the_strongest_pad_rule() {
    // The control for the tests above: with independent pads the 15 %
    // leakage of a 20x touch (3.85x on the neighbour) crosses the 2.8x on
    // ratio, so the neighbours of a middle pad report touches too.
    let touches = [(1usize, 1.0, 1.5)];
    let x = render_panel(4, 2000.0, 2.5, 8, |ch, t| {
        panel_amp(ch, t, &touches, 20.0, 1.0)
    });
    let mut cfg = Config::touch();
    cfg.panel = PanelMode::Independent;
    let ev = run_panel::<4>(cfg, &x);
    // Which pads, not in which order (the touched pad's 20x rise is strong
    // evidence and turns on a cycle before its neighbours' 3.85x).
    let mut pads: Vec<u8> = ev
        .iter()
        .filter(|(_, e)| e.kind == EventKind::TouchOn)
        .map(|(_, e)| e.channel)
        .collect();
    pads.sort_unstable();
    assert_eq!(pads, vec![0, 1, 2], "{ev:?}");
}

fn lamp_on_panel(pads: usize) {
    // A lamp beside the panel raises the ambient hum 5x on every pad for
    // 15 s (8 to 23 s), switching on and off within one mains cycle.
    // Touches before, during and after it, on an edge pad and a middle pad.
    let common = |t: f64| if (8.0..23.0).contains(&t) { 5.0 } else { 1.0 };
    let mid = pads / 2;
    let touches = [
        (0usize, 3.0, 3.5),
        (mid, 5.0, 5.6),
        (mid, 10.0, 10.5),
        (0, 14.0, 14.8),
        (pads - 1, 19.0, 19.4),
        (mid, 27.0, 27.5),
        (0, 29.0, 29.3),
    ];
    let x = render_panel(pads, 2000.0, 31.0, 6, |ch, t| {
        panel_amp(ch, t, &touches, 20.0, common(t))
    });
    let ev = match pads {
        4 => run_panel::<4>(Config::touch(), &x),
        _ => run_panel::<8>(Config::touch(), &x),
    };
    check(&touches_by_pad(&ev, pads), &touches);
}

#[test]
fn four_pads_lamp_on_is_ambient_not_a_touch() {
    lamp_on_panel(4);
}

#[test]
fn eight_pads_lamp_on_is_ambient_not_a_touch() {
    lamp_on_panel(8);
}

#[test]
fn lamp_on_would_touch_every_pad_without_the_ambient_rule() {
    // The control: with the ambient rule off (a ratio no lamp reaches),
    // the 5x step crosses the on ratio on the strongest pad.
    let common = |t: f64| if (2.0..4.0).contains(&t) { 5.0 } else { 1.0 };
    let x = render_panel(4, 2000.0, 5.0, 6, |ch, t| ambient(ch) * common(t));
    let mut cfg = Config::touch();
    cfg.ambient_ratio = 100.0;
    let ev = run_panel::<4>(cfg, &x);
    assert!(
        ev.iter().any(|(_, e)| e.kind == EventKind::TouchOn),
        "{ev:?}"
    );
    let ev = run_panel::<4>(Config::touch(), &x);
    assert!(ev.is_empty(), "{ev:?}");
}

#[test]
fn multi_touch_reports_two_pads_at_once() {
    // Independent pads, two fingers at once on pads 1 and 6 of eight
    // (8x each, so 15 % leakage, 2.05x, stays below the 2.8x on ratio).
    let touches = [(1usize, 1.0, 2.0), (6, 1.2, 2.2)];
    let x = render_panel(8, 2000.0, 3.0, 2, |ch, t| {
        panel_amp(ch, t, &touches, 8.0, 1.0)
    });
    let mut cfg = Config::touch();
    cfg.panel = PanelMode::Independent;
    let ev = run_panel::<8>(cfg, &x);
    check(&touches_by_pad(&ev, 8), &touches);
    // Both on at the same time.
    let on1 = ev
        .iter()
        .find(|(_, e)| e.channel == 1 && e.kind == EventKind::TouchOn)
        .map(|p| p.0);
    let off1 = ev
        .iter()
        .find(|(_, e)| e.channel == 1 && e.kind == EventKind::TouchOff)
        .map(|p| p.0);
    let on6 = ev
        .iter()
        .find(|(_, e)| e.channel == 6 && e.kind == EventKind::TouchOn)
        .map(|p| p.0);
    assert!(on6 > on1 && on6 < off1, "{ev:?}");
    // The default (strongest pad) never has two pads on at once: pad 1
    // first, and pad 6 only after pad 1 is released (while its finger is
    // still there).
    let ev = run_panel::<8>(Config::touch(), &x);
    let order: Vec<(u8, EventKind)> = ev.iter().map(|(_, e)| (e.channel, e.kind)).collect();
    assert_eq!(
        order,
        vec![
            (1, EventKind::TouchOn),
            (1, EventKind::TouchOff),
            (6, EventKind::TouchOn),
            (6, EventKind::TouchOff)
        ],
        "{ev:?}"
    );
}
