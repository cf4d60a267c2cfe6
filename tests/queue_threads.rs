//! The interrupt path's queue under real concurrency: a producer thread
//! (the interrupt handler) pushes 200 000 events in bursts of varying
//! length, a consumer thread (the main loop) pops them at its own pace.
//! Uses critical-section's `std` implementation (a global mutex).
//!
//! Events carry consecutive `sample` values, so the consumer can account
//! for every one: each is either popped, in order, or inside the range an
//! `Overflow(n)` report covers (the report carries the first lost sample,
//! and a report stands for consecutive losses). Bounded loops only, no
//! timing assertions: at fixed points the producer pauses the consumer
//! (a handshake, not a delay) and pushes a burst longer than the queue,
//! so losses happen on every run whatever the scheduling.
#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::thread;

use humsense::{Event, EventKind, EventQueue};

const CAP: usize = 8;
const EVENTS: u64 = 200_000;
/// Every this many events the consumer is paused for one long burst.
const PHASE: u64 = 10_000;
/// Pushed while the consumer is paused: more than the queue holds.
const LONG_BURST: u64 = 3 * CAP as u64;
/// Iteration bound on every wait (a hang fails instead of hanging).
const SPIN_LIMIT: u64 = 50_000_000;

fn ev(sample: u64) -> Event {
    let channel = (sample % 4) as u8;
    let kind = if sample.is_multiple_of(2) {
        EventKind::TouchOn
    } else {
        EventKind::TouchOff
    };
    Event::new(channel, kind, sample, sample as u32, 7)
}

/// xorshift64: the burst pattern, the same on every run.
fn next(s: &mut u64) -> u64 {
    *s ^= *s << 13;
    *s ^= *s >> 7;
    *s ^= *s << 17;
    *s
}

#[test]
fn every_event_is_popped_in_order_or_reported_lost() {
    let queue: EventQueue<CAP> = EventQueue::new();
    // Pause handshake, by phase number (1, 2, …): the producer asks, the
    // consumer acknowledges and waits, the producer resumes it.
    let ask = AtomicU64::new(0);
    let ack = AtomicU64::new(0);
    let resume = AtomicU64::new(0);
    let done = AtomicBool::new(false);
    let refused = AtomicU64::new(0);

    let (popped, reported, reports) = thread::scope(|s| {
        s.spawn(|| {
            let mut rng = 0x9e37_79b9_7f4a_7c15u64;
            let mut sample = 0u64;
            let mut refused_here = 0u64;
            let mut push = |sample: u64| {
                if !queue.push(ev(sample)) {
                    refused_here += 1;
                }
            };
            while sample < EVENTS {
                if sample.is_multiple_of(PHASE) {
                    // Pause the consumer, wait until it says so, then a
                    // burst the queue cannot hold.
                    let phase = sample / PHASE + 1;
                    ask.store(phase, Ordering::SeqCst);
                    let mut spins = 0u64;
                    while ack.load(Ordering::SeqCst) != phase {
                        spins += 1;
                        assert!(spins < SPIN_LIMIT, "consumer never paused");
                        thread::yield_now();
                    }
                    let end = (sample + LONG_BURST).min(EVENTS);
                    while sample < end {
                        push(sample);
                        sample += 1;
                    }
                    resume.store(phase, Ordering::SeqCst);
                    continue;
                }
                // Free-running: bursts of 1 to 32 events with 0 to 3
                // yields between them.
                let r = next(&mut rng);
                let burst = 1 + r % 32;
                let end = (sample + burst)
                    .min(EVENTS)
                    .min(sample.next_multiple_of(PHASE));
                while sample < end {
                    push(sample);
                    sample += 1;
                }
                for _ in 0..(r >> 8) % 4 {
                    thread::yield_now();
                }
            }
            refused.store(refused_here, Ordering::SeqCst);
            done.store(true, Ordering::SeqCst);
        });
        let consumer = s.spawn(|| {
            let mut expected = 0u64; // next sample not yet accounted for
            let mut popped = 0u64;
            let mut reported = 0u64;
            let mut reports = 0u64;
            let mut rng = 0x2545_f491_4f6c_dd1du64;
            // Whether an event has been popped since the last pause: the
            // next pause waits for one, so every paused burst's loss is
            // reported before the next burst (the queue is full after a
            // burst, so that pop succeeds).
            let mut popped_since_pause = true;
            for round in 0u64.. {
                assert!(round < SPIN_LIMIT, "consumer did not finish");
                let phase = ask.load(Ordering::SeqCst);
                if popped_since_pause && phase > ack.load(Ordering::SeqCst) {
                    ack.store(phase, Ordering::SeqCst);
                    let mut spins = 0u64;
                    while resume.load(Ordering::SeqCst) != phase {
                        spins += 1;
                        assert!(spins < SPIN_LIMIT, "producer never resumed");
                        thread::yield_now();
                    }
                    popped_since_pause = false;
                }
                // Read `done` before popping: if it was set, every push is
                // in, so an empty queue afterwards is the end.
                let finished = done.load(Ordering::SeqCst);
                let got = queue.pop();
                popped_since_pause |= got.is_some();
                match got {
                    Some(e) => match e.kind {
                        EventKind::Overflow(n) => {
                            assert!(n >= 1);
                            assert_eq!(e.channel, Event::ALL_CHANNELS);
                            assert_eq!(e.sample, expected, "report not where the loss began");
                            expected += u64::from(n);
                            reported += u64::from(n);
                            reports += 1;
                        }
                        _ => {
                            assert_eq!(e, ev(expected), "event out of order or altered");
                            expected += 1;
                            popped += 1;
                        }
                    },
                    None if finished => break,
                    None => {}
                }
                // Pace: mostly pop again at once, sometimes yield.
                if next(&mut rng).is_multiple_of(8) {
                    thread::yield_now();
                }
            }
            assert_eq!(expected, EVENTS, "events neither popped nor reported");
            (popped, reported, reports)
        });
        consumer.join().unwrap()
    });

    let refused = refused.load(Ordering::SeqCst);
    assert_eq!(popped + reported, EVENTS);
    assert_eq!(reported, refused, "reported losses against refused pushes");
    assert_eq!(queue.total_lost(), refused);
    assert!(queue.is_empty());
    // Each paused burst loses at least LONG_BURST − CAP events.
    let phases = EVENTS.div_ceil(PHASE);
    assert!(
        refused >= phases * (LONG_BURST - CAP as u64),
        "{refused} lost in {phases} paused bursts"
    );
    assert!(reports >= phases, "{reports} overflow reports");
    println!("popped {popped}, lost {refused} in {reports} reports");
}
