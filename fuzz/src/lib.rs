//! Helpers shared by the humsim parser targets.

use std::io::{self, Read};

use humsim::input::{FrameSource, MAX_CHANNELS};

/// A reader over a copy of `data` that returns at most `chunk` bytes a
/// call, so the parsers see short reads as they may from a pipe. Owned
/// (`'static`), as the parsers take boxed readers.
pub struct Trickle {
    data: Vec<u8>,
    pos: usize,
    chunk: usize,
}

impl Trickle {
    /// Reads `data` in pieces of at most `chunk` bytes (0 means no limit).
    pub fn new(data: &[u8], chunk: usize) -> Self {
        Self {
            data: data.to_vec(),
            pos: 0,
            chunk: if chunk == 0 { usize::MAX } else { chunk },
        }
    }
}

impl Read for Trickle {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        let rest = &self.data[self.pos..];
        let n = buf.len().min(self.chunk).min(rest.len());
        buf[..n].copy_from_slice(&rest[..n]);
        self.pos += n;
        Ok(n)
    }
}

/// What reading a source to its end gave.
pub struct Drained {
    /// Frames read before the end or the error.
    pub frames: u64,
    /// The error that ended the read, if any.
    pub error: Option<String>,
}

/// Reads every frame of `src` in blocks of `block` frames, checking what
/// every source promises: a sane description (1 to `MAX_CHANNELS` named
/// channels, a finite rate, 8 to 16 bits), whole frames within the
/// buffer, every code within the range of its bits, and errors that name
/// the input. Stops after `max_reads` reads (a source that never ends is a
/// hang: the caller bounds it by the input's size).
pub fn drain(src: &mut dyn FrameSource, block: usize, max_reads: u64) -> Drained {
    let nch = src.channel_names().len();
    assert!((1..=MAX_CHANNELS).contains(&nch), "{nch} channels");
    assert!(
        src.channel_names().iter().all(|n| !n.is_empty()),
        "empty channel name"
    );
    let rate = src.rate_hz();
    // 0 Hz can come from a WAV header; the source reports it as it is and
    // replay refuses any rate the detector cannot take, with a message.
    assert!(rate.is_finite() && rate >= 0.0, "rate {rate}");
    let bits = src.bits();
    assert!((8..=16).contains(&bits), "{bits} bits");
    assert!(src.start_s().is_finite(), "start {}", src.start_s());
    let (lo, hi) = if src.signed() {
        (-(1i32 << (bits - 1)), (1i32 << (bits - 1)) - 1)
    } else {
        (0, (1i32 << bits) - 1)
    };
    let name = src.name().to_string();
    let mut buf = vec![i32::MIN; block.max(1) * nch];
    let mut frames = 0u64;
    for _ in 0..max_reads {
        buf.fill(i32::MIN);
        match src.read(&mut buf) {
            Ok(0) => {
                return Drained {
                    frames,
                    error: None,
                }
            }
            Ok(n) => {
                assert!(
                    n * nch <= buf.len(),
                    "{n} frames in a buffer of {}",
                    buf.len()
                );
                for &v in &buf[..n * nch] {
                    assert!((lo..=hi).contains(&v), "code {v} outside {lo}..={hi}");
                }
                frames += n as u64;
            }
            Err(e) => {
                assert!(e.starts_with(&name), "error does not name the input: {e}");
                return Drained {
                    frames,
                    error: Some(e),
                };
            }
        }
    }
    panic!("{name}: still reading after {max_reads} reads ({frames} frames)");
}
