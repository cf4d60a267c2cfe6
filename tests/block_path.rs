//! The block path (`push_block`, per-channel state in registers, the gate's
//! watermark and hold marker) gives exactly the frame path's events and
//! per-channel state, on hum with dense spikes of every length around the
//! gate's limit, for 1 and 3 channels and block lengths that split frames
//! and cycles anywhere.
#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

use humsense::{Config, Detector, Event};

/// Interleaved `u16` frames: 50 Hz hum at 2 kHz with a touch, noise and
/// bursts of 1 to 5 spike samples (full scale, small steps just above the
/// gate limit, and in between), from a fixed-seed generator.
fn signal<const N: usize>(frames: usize, seed: u64) -> Vec<u16> {
    let mut s = seed;
    let mut rnd = move || {
        s = s
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        (s >> 33) as u32
    };
    let mut out = Vec::with_capacity(frames * N);
    let mut burst = [0u32; N];
    let mut level = [0i32; N];
    for k in 0..frames {
        for c in 0..N {
            let amp = if (3_000..6_000).contains(&k) && c == 1 % N {
                400.0
            } else {
                30.0
            };
            let th = core::f64::consts::TAU * (k as f64 / 40.0 + c as f64 / 3.0);
            let mut x = 2048.0 + amp * th.sin() + f64::from(rnd() % 5) - 2.0;
            if burst[c] == 0 && rnd() % 293 == 0 {
                burst[c] = 1 + rnd() % 5;
                level[c] = match rnd() % 3 {
                    0 => 4000,
                    1 => 2048 + (rnd() % 64) as i32,
                    _ => (rnd() % 4096) as i32,
                };
            }
            if burst[c] > 0 {
                burst[c] -= 1;
                x = f64::from(level[c]);
            }
            out.push(x.clamp(0.0, 4095.0) as u16);
        }
    }
    out
}

fn by_frames<const N: usize>(cfg: Config, xs: &[u16]) -> (Vec<Event>, Detector<N>) {
    let mut det = Detector::<N>::new(cfg).unwrap();
    let mut ev = Vec::new();
    for f in xs.chunks_exact(N) {
        let frame: [u16; N] = f.try_into().unwrap();
        det.push_frame(&frame, |e| ev.push(e));
    }
    (ev, det)
}

fn by_blocks<const N: usize>(cfg: Config, xs: &[u16], len: usize) -> (Vec<Event>, Detector<N>) {
    let mut det = Detector::<N>::new(cfg).unwrap();
    let mut ev = Vec::new();
    let mut pending: Vec<u16> = Vec::new();
    for block in xs.chunks(len) {
        pending.extend_from_slice(block);
        let left = det.push_block(&pending, |e| ev.push(e));
        pending.drain(..pending.len() - left);
    }
    assert!(pending.is_empty());
    (ev, det)
}

fn same<const N: usize>(cfg: Config, seed: u64) {
    let xs = signal::<N>(9_000, seed);
    let (want, det_f) = by_frames::<N>(cfg, &xs);
    assert!(!want.is_empty(), "{:?}", det_f.snapshot(0));
    for len in [1, 2, 7, 40, 41, 64, 200, 1_000] {
        let (got, det_b) = by_blocks::<N>(cfg, &xs, len);
        assert_eq!(got, want, "block length {len}");
        for ch in 0..N {
            assert_eq!(det_b.snapshot(ch), det_f.snapshot(ch), "block length {len}");
        }
        assert_eq!(
            format!("{:?}", det_b.frontend()),
            format!("{:?}", det_f.frontend()),
            "block length {len}"
        );
    }
}

#[test]
fn one_channel_blocks_match_frames() {
    for seed in 1..4 {
        same::<1>(Config::touch(), seed);
        same::<1>(Config::field(), seed);
    }
}

#[test]
fn three_channel_blocks_match_frames() {
    for seed in 1..3 {
        same::<3>(Config::touch(), seed);
    }
}

#[test]
fn longest_and_no_spike_rejection_match_frames() {
    let mut long = Config::touch();
    long.spike_max_len = 8;
    let mut off = Config::touch();
    off.spike_max_len = 0;
    same::<1>(long, 9);
    same::<1>(off, 9);
}

#[test]
fn samples_seen_counts_every_frame_on_both_paths() {
    // The count of frames taken, before the first cycle ends, across cycle
    // ends and with a block ending inside a pair (a count kept by hand is
    // the reference).
    let xs = signal::<1>(1_000, 5);
    let mut det = Detector::<1>::new(Config::touch()).unwrap();
    assert_eq!(det.samples_seen(), 0);
    let mut taken = 0u64;
    for (k, x) in xs[..333].iter().enumerate() {
        det.push_frame(&[*x], |_| {});
        taken += 1;
        if k % 37 == 0 {
            assert_eq!(det.samples_seen(), taken);
        }
    }
    for block in xs[333..].chunks(61) {
        let left = det.push_block(block, |_| {});
        assert_eq!(left, 0);
        taken += block.len() as u64;
        assert_eq!(det.samples_seen(), taken);
    }
    assert_eq!(taken, 1_000);
}
