//! The interrupt-safe path on the host: a producer thread plays the ADC
//! interrupt (feeding samples to the detector and pushing its events), a
//! consumer thread plays the main loop. Uses critical-section's `std`
//! implementation (a global mutex). Every event produced is either
//! received or counted as lost, and the count arrives as an overflow event.
#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

mod support;

use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::thread;
use std::time::Duration;

use humsense::{Config, Detector, EventKind, EventQueue, PanelMode};
use support::{press, render_panel};

static EVENTS: EventQueue<8> = EventQueue::new();

#[test]
fn every_event_is_received_or_reported_lost() {
    // Four independent pads, each pressed 40 times, one pad at a time
    // (all pads rising together would be ambient): 320 touch events.
    let presses: Vec<Vec<(f64, f64)>> = (0..4)
        .map(|p| {
            (0..40)
                .map(|k| 1.0 + k as f64 * 0.5 + p as f64 * 0.12)
                .map(|s| (s, s + 0.09))
                .collect()
        })
        .collect();
    let x = render_panel(4, 2000.0, 22.0, 12, |ch, t| {
        press(t, 25.0, 20.0, &presses[ch])
    });
    let produced = AtomicU64::new(0);
    let done = AtomicBool::new(false);
    let mut cfg = Config::touch();
    cfg.panel = PanelMode::Independent;
    let mut det = Detector::<4, 0>::new(cfg).unwrap();

    let (received, reported_lost, samples) = thread::scope(|s| {
        s.spawn(|| {
            // "Interrupt": DMA blocks of 64 frames.
            for block in x.chunks(256) {
                det.push_block(block, |e| {
                    produced.fetch_add(1, Ordering::SeqCst);
                    let _ = EVENTS.push(e);
                });
            }
            done.store(true, Ordering::SeqCst);
        });
        let consumer = s.spawn(|| {
            // "Main loop": slow, so the queue of 8 overflows at times.
            let mut received = 0u64;
            let mut lost = 0u64;
            let mut samples = Vec::new();
            // Start late, so the queue of 8 is certain to overflow once.
            while produced.load(Ordering::SeqCst) < 30 && !done.load(Ordering::SeqCst) {
                thread::sleep(Duration::from_micros(100));
            }
            for round in 0u64.. {
                assert!(round < 10_000_000, "consumer did not finish");
                match EVENTS.pop() {
                    Some(e) => match e.kind {
                        EventKind::Overflow(n) => lost += u64::from(n),
                        _ => {
                            received += 1;
                            samples.push(e.sample);
                        }
                    },
                    None if done.load(Ordering::SeqCst) && EVENTS.is_empty() => break,
                    None => {}
                }
                if round % 3 == 0 {
                    thread::sleep(Duration::from_micros(50));
                }
            }
            (received, lost, samples)
        });
        consumer.join().unwrap()
    });

    let produced = produced.load(Ordering::SeqCst);
    assert_eq!(
        produced, 320,
        "the detector should report 40 presses on 4 pads, on and off"
    );
    assert_eq!(
        received + reported_lost,
        produced,
        "received {received}, reported lost {reported_lost}"
    );
    assert_eq!(EVENTS.total_lost(), reported_lost);
    assert!(
        reported_lost >= 22,
        "the late start must have lost events: {reported_lost}"
    );
    assert!(
        samples.windows(2).all(|w| w[0] <= w[1]),
        "events out of order"
    );
}
