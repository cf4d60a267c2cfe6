//! Raw little-endian 16-bit codes (see the [module docs](super)).

use super::{check_channels, FrameSource, RawFormat, SourceInfo};
use std::fs::File;
use std::io::{BufReader, Read};
use std::path::Path;

/// Raw little-endian 16-bit codes.
pub struct RawSource {
    info: SourceInfo,
    reader: Box<dyn Read>,
    lo: i32,
    hi: i32,
    bytes: Vec<u8>,
    offset: u64,
    started: bool,
}

impl RawSource {
    /// Opens a raw file.
    pub fn open(
        path: &Path,
        format: RawFormat,
        channels: usize,
        rate_hz: f64,
        bits: u8,
    ) -> Result<RawSource, String> {
        let name = path.display().to_string();
        check_channels(&name, channels)?;
        let file = File::open(path).map_err(|e| format!("{name}: cannot open: {e}"))?;
        RawSource::from_reader(
            name,
            Box::new(BufReader::with_capacity(1 << 20, file)),
            format,
            channels,
            rate_hz,
            bits,
        )
    }

    /// [`RawSource::open`] on any reader (`name` for messages): for tests
    /// and fuzzing without files.
    pub fn from_reader(
        name: String,
        reader: Box<dyn Read>,
        format: RawFormat,
        channels: usize,
        rate_hz: f64,
        bits: u8,
    ) -> Result<RawSource, String> {
        check_channels(&name, channels)?;
        super::check_bits(bits)?;
        let (lo, hi) = match format {
            RawFormat::U16Le => (0, (1i32 << bits) - 1),
            RawFormat::I16Le => (-(1i32 << (bits - 1)), (1i32 << (bits - 1)) - 1),
        };
        Ok(RawSource {
            info: SourceInfo {
                name,
                channels: (0..channels).map(|i| format!("ch{i}")).collect(),
                rate_hz,
                bits,
                signed: format == RawFormat::I16Le,
                start_s: 0.0,
            },
            reader,
            lo,
            hi,
            bytes: Vec::new(),
            offset: 0,
            started: false,
        })
    }
}

impl FrameSource for RawSource {
    fn info(&self) -> &SourceInfo {
        &self.info
    }
    fn read(&mut self, buf: &mut [i32]) -> Result<usize, String> {
        let nch = self.info.channels.len();
        let frame_bytes = 2 * nch;
        let want = buf.len() / nch * frame_bytes;
        self.bytes.resize(want, 0);
        let mut filled = 0usize;
        while filled < want {
            let Some(rest) = self.bytes.get_mut(filled..) else {
                break;
            };
            match self.reader.read(rest) {
                Ok(0) => break,
                Ok(n) => filled += n,
                Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
                Err(e) => return Err(format!("{}: cannot read: {e}", self.info.name)),
            }
        }
        if filled == 0 && !self.started {
            return Err(format!("{}: empty file", self.info.name));
        }
        self.started = true;
        if !filled.is_multiple_of(frame_bytes) {
            return Err(format!(
                "{}: truncated: {} trailing bytes at byte offset {} do not make a whole frame \
                 ({nch} channels x 2 bytes)",
                self.info.name,
                filled % frame_bytes,
                self.offset + (filled - filled % frame_bytes) as u64
            ));
        }
        let frames = filled / frame_bytes;
        let signed = self.signed();
        for (k, (pair, slot)) in self
            .bytes
            .chunks_exact(2)
            .take(frames * nch)
            .zip(buf.iter_mut())
            .enumerate()
        {
            let raw = [
                pair.first().copied().unwrap_or(0),
                pair.get(1).copied().unwrap_or(0),
            ];
            let v = if signed {
                i32::from(i16::from_le_bytes(raw))
            } else {
                i32::from(u16::from_le_bytes(raw))
            };
            if v < self.lo || v > self.hi {
                let byte = self.offset + 2 * k as u64;
                return Err(format!(
                    "{}: frame {}, channel ch{} (byte offset {byte}): code {v} is out of range \
                     for {}-bit codes ({} to {}); see --bits",
                    self.info.name,
                    byte / frame_bytes as u64,
                    k % nch,
                    self.info.bits,
                    self.lo,
                    self.hi
                ));
            }
            *slot = v;
        }
        self.offset += filled as u64;
        Ok(frames)
    }
}
