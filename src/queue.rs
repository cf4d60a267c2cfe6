//! The interrupt-safe event path: an event queue that an interrupt handler
//! fills and the main loop drains, through `critical-section`, with a
//! `heapless` deque of const-generic capacity. A full queue never loses
//! events silently: it counts them, and as soon as space returns it puts an
//! [`EventKind::Overflow`] event with the count where the lost events were.
//!
//! Each call holds the critical section for one queue operation only (a few
//! dozen instructions). The detector itself belongs to the interrupt
//! handler: it needs no lock if the handler owns it (for example a
//! handler-local `static mut` under `cortex-m-rt`, which that crate turns
//! into a safe `&mut`), or it can sit in a
//! `critical_section::Mutex<RefCell<…>>` as below, at the cost of
//! interrupt latency while a block is processed.
//!
//! ```
//! use core::cell::RefCell;
//! use critical_section::Mutex;
//! use humsense::{queue::EventQueue, Config, Detector, EventKind};
//!
//! // Static setup: the queue is built in const context; the detector once
//! // at start-up, before the ADC interrupt is enabled.
//! static EVENTS: EventQueue<32> = EventQueue::new();
//! static DETECTOR: Mutex<RefCell<Option<Detector<4>>>> = Mutex::new(RefCell::new(None));
//!
//! fn init() -> Result<(), humsense::ConfigError> {
//!     let det = Detector::new(Config::touch())?;
//!     critical_section::with(|cs| DETECTOR.borrow_ref_mut(cs).replace(det));
//!     Ok(())
//! }
//!
//! /// Body of the ADC-complete (DMA transfer complete) interrupt handler:
//! /// `block` is the half of the DMA buffer just filled, four channels
//! /// interleaved.
//! fn adc_complete(block: &[u16]) {
//!     critical_section::with(|cs| {
//!         if let Some(det) = DETECTOR.borrow_ref_mut(cs).as_mut() {
//!             det.push_block(block, |e| {
//!                 let _ = EVENTS.push(e); // counted and reported if full
//!             });
//!         }
//!     });
//! }
//!
//! /// The main loop's side.
//! fn poll() -> Option<(u8, EventKind)> {
//!     EVENTS.pop().map(|e| (e.channel, e.kind))
//! }
//!
//! init().expect("valid config");
//! adc_complete(&[2048; 256]);
//! assert_eq!(poll(), None);
//! ```

use core::cell::RefCell;

use critical_section::Mutex;
use heapless::Deque;

use crate::event::{Event, EventKind};

struct Inner<const CAP: usize> {
    queue: Deque<Event, CAP>,
    /// Lost since the last overflow report.
    pending_lost: u32,
    /// Sample index of the first of them.
    first_lost: u64,
    /// Lost since start-up, saturating.
    total_lost: u64,
}

impl<const CAP: usize> Inner<CAP> {
    fn report_loss(&mut self) {
        if self.pending_lost == 0 || self.queue.is_full() {
            return;
        }
        let marker = Event::new(
            Event::ALL_CHANNELS,
            EventKind::Overflow(self.pending_lost),
            self.first_lost,
            0,
            0,
        );
        if self.queue.push_back(marker).is_ok() {
            self.pending_lost = 0;
        }
    }

    fn push(&mut self, e: Event) -> bool {
        self.report_loss();
        match self.queue.push_back(e) {
            Ok(()) => true,
            Err(lost) => {
                if self.pending_lost == 0 {
                    self.first_lost = lost.sample;
                }
                self.pending_lost = self.pending_lost.saturating_add(1);
                self.total_lost = self.total_lost.saturating_add(1);
                false
            }
        }
    }

    fn pop(&mut self) -> Option<Event> {
        let e = self.queue.pop_front();
        self.report_loss();
        e
    }
}

/// A queue of events between an interrupt handler (producer) and the main
/// loop (consumer), holding up to `CAP` events (`CAP` ≥ 2).
pub struct EventQueue<const CAP: usize> {
    inner: Mutex<RefCell<Inner<CAP>>>,
}

impl<const CAP: usize> Default for EventQueue<CAP> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const CAP: usize> EventQueue<CAP> {
    /// An empty queue; usable in `static` initialisers.
    pub const fn new() -> Self {
        const {
            assert!(
                CAP >= 2,
                "an event queue needs room for an event and an overflow report"
            )
        };
        Self {
            inner: Mutex::new(RefCell::new(Inner {
                queue: Deque::new(),
                pending_lost: 0,
                first_lost: 0,
                total_lost: 0,
            })),
        }
    }

    /// Producer side: adds an event. Returns `false` when the queue was
    /// full and the event was counted as lost (it will be reported by an
    /// [`EventKind::Overflow`] event as soon as there is room). Never
    /// panics, never blocks beyond one short critical section.
    pub fn push(&self, e: Event) -> bool {
        critical_section::with(|cs| self.inner.borrow_ref_mut(cs).push(e))
    }

    /// Consumer side: takes the oldest event. Never panics.
    pub fn pop(&self) -> Option<Event> {
        critical_section::with(|cs| self.inner.borrow_ref_mut(cs).pop())
    }

    /// Events waiting.
    pub fn len(&self) -> usize {
        critical_section::with(|cs| self.inner.borrow_ref(cs).queue.len())
    }

    /// Whether no event is waiting.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Events lost to a full queue since start-up (each also reported by an
    /// overflow event), saturating.
    pub fn total_lost(&self) -> u64 {
        critical_section::with(|cs| self.inner.borrow_ref(cs).total_lost)
    }
}

#[cfg(feature = "defmt")]
impl<const CAP: usize> defmt::Format for EventQueue<CAP> {
    fn format(&self, f: defmt::Formatter<'_>) {
        defmt::write!(
            f,
            "EventQueue {{ len: {}, capacity: {}, total_lost: {} }}",
            self.len(),
            CAP,
            self.total_lost()
        );
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::event::EventKind;

    fn ev(sample: u64) -> Event {
        Event::new(0, EventKind::TouchOn, sample, 0, 0)
    }

    #[test]
    fn overflow_is_counted_and_reported_in_place() {
        let q: EventQueue<3> = EventQueue::new();
        for s in 0..6 {
            let _ = q.push(ev(s));
        }
        assert_eq!(q.total_lost(), 3);
        assert_eq!(q.pop().map(|e| e.sample), Some(0));
        // Space returned: the report of the three lost events (first lost
        // at sample 3) follows the events queued before the loss.
        assert_eq!(q.pop().map(|e| e.sample), Some(1));
        assert_eq!(q.pop().map(|e| e.sample), Some(2));
        let marker = q.pop().expect("overflow report");
        assert_eq!(marker.kind, EventKind::Overflow(3));
        assert_eq!(marker.sample, 3);
        assert_eq!(marker.channel, Event::ALL_CHANNELS);
        assert!(q.pop().is_none());
        assert!(q.push(ev(9)));
        assert_eq!(q.len(), 1);
    }
}
