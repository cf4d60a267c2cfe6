//! WAV files of integer PCM (see the [module docs](super)).
//!
//! `hound` parses the header and decodes samples whose valid bits fill
//! their container (8, 16, 24, 32 bits, and 24 in 32). A
//! `WAVE_FORMAT_EXTENSIBLE` file may declare fewer valid bits than its
//! container holds (a 12-bit ADC in 16-bit samples): the format stores such
//! samples left-justified, the unused low bits zero (Microsoft's
//! WAVEFORMATEXTENSIBLE documentation, from memory), so this reader takes
//! the container's signed little-endian value, checks that the padding bits
//! are zero (a file that breaks that rule is refused, naming the frame) and
//! shifts them out. The valid bits are then the PCM width, and the default
//! `--bits`.

use super::{check_channels, FrameSource, SourceInfo};
use std::cell::RefCell;
use std::fs::File;
use std::io::{BufReader, Read};
use std::path::Path;
use std::rc::Rc;

/// Records the first bytes read through it: the header `hound` consumed,
/// for the container width it does not expose.
struct Tee {
    inner: Box<dyn Read>,
    seen: Rc<RefCell<Vec<u8>>>,
}

/// Header bytes kept for [`Tee`]; a header beyond this gives no container.
const TEE_LIMIT: usize = 1 << 16;

impl Read for Tee {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        let mut seen = self.seen.borrow_mut();
        if seen.len() < TEE_LIMIT {
            seen.extend_from_slice(buf.get(..n).unwrap_or(&[]));
        }
        Ok(n)
    }
}

/// `block_align / channels` from the `fmt ` chunk of a RIFF header: the
/// bytes each sample's container takes.
fn container_bytes(header: &[u8]) -> Option<u16> {
    let mut at = 12usize;
    while let Some(head) = header.get(at..at + 8) {
        let size = u32::from_le_bytes(head.get(4..8)?.try_into().ok()?) as usize;
        if head.get(..4)? == b"fmt " {
            let fmt = header.get(at + 8..at + 8 + 16)?;
            let channels = u16::from_le_bytes(fmt.get(2..4)?.try_into().ok()?);
            let align = u16::from_le_bytes(fmt.get(12..14)?.try_into().ok()?);
            return align.checked_div(channels);
        }
        at = at.checked_add(8 + size + (size & 1))?;
    }
    None
}

/// How samples are decoded.
enum Decoder {
    /// By `hound`: the valid bits fill the container.
    Hound(hound::WavReader<Tee>),
    /// By this module: `bytes` per sample, `shift` padding bits below the
    /// valid ones.
    Padded {
        reader: Tee,
        bytes: usize,
        shift: u32,
        raw: Vec<u8>,
    },
}

/// A WAV file of integer PCM (see the module docs).
pub struct WavSource {
    info: SourceInfo,
    decoder: Decoder,
    lo: i32,
    hi: i32,
    declared: u64,
    read: u64,
}

impl WavSource {
    /// Opens a WAV file; `bits` is `--bits`.
    pub fn open(path: &Path, bits: Option<u8>) -> Result<WavSource, String> {
        let name = path.display().to_string();
        let file = File::open(path).map_err(|e| format!("{name}: cannot open: {e}"))?;
        WavSource::from_reader(
            name,
            Box::new(BufReader::with_capacity(1 << 16, file)),
            bits,
        )
    }

    /// [`WavSource::open`] on any reader (`name` for messages): for tests
    /// and fuzzing without files.
    pub fn from_reader(
        name: String,
        reader: Box<dyn Read>,
        bits: Option<u8>,
    ) -> Result<WavSource, String> {
        if let Some(b) = bits {
            super::check_bits(b)?;
        }
        let seen = Rc::new(RefCell::new(Vec::new()));
        let tee = Tee {
            inner: reader,
            seen: Rc::clone(&seen),
        };
        let reader = hound::WavReader::new(tee).map_err(|e| match e {
            hound::Error::IoError(ref io) if io.kind() == std::io::ErrorKind::UnexpectedEof => {
                format!("{name}: truncated WAV: the file ends inside its header")
            }
            other if other.to_string().contains("enough bytes") => {
                format!("{name}: truncated WAV: the file ends inside its header ({other})")
            }
            other => format!("{name}: not a readable WAV file: {other}"),
        })?;
        let spec = reader.spec();
        if spec.sample_format != hound::SampleFormat::Int {
            return Err(format!(
                "{name}: floating-point WAV; expected integer PCM ADC codes"
            ));
        }
        let width = spec.bits_per_sample;
        let nch = usize::from(spec.channels);
        check_channels(&name, nch)?;
        let bits = match bits {
            Some(b) if u16::from(b) > width => {
                return Err(format!(
                    "{name}: --bits {b} exceeds the file's {width}-bit PCM"
                ))
            }
            Some(b) => b,
            None if width <= 16 => width as u8,
            None => {
                return Err(format!(
                    "{name}: {width}-bit PCM; the detector takes codes of 8 to 16 bits: pass \
                     --bits N (8 to 16) if the samples are ADC codes stored unchanged"
                ))
            }
        };
        if bits < 8 {
            return Err(format!(
                "{name}: {bits}-bit codes; the detector takes 8 to 16 bits"
            ));
        }
        let signed = u16::from(bits) == width;
        let (lo, hi) = if signed {
            (-(1i32 << (bits - 1)), (1i32 << (bits - 1)) - 1)
        } else {
            (0, (1i32 << bits) - 1)
        };
        let declared = u64::from(reader.len());
        if declared == 0 {
            return Err(format!("{name}: the WAV holds no samples"));
        }
        let bytes = container_bytes(&seen.borrow()).unwrap_or(width.div_ceil(8));
        // In u32: `bytes` comes from the file (a block alignment up to
        // 65 535), so eight times it may not fit u16.
        let container_bits = 8 * u32::from(bytes);
        let decoder = if u32::from(width) == container_bits || (width, bytes) == (24, 4) {
            Decoder::Hound(reader)
        } else if (2..=4).contains(&bytes) && u32::from(width) < container_bits {
            Decoder::Padded {
                reader: reader.into_inner(),
                bytes: usize::from(bytes),
                shift: u32::from(8 * bytes - width),
                raw: Vec::new(),
            }
        } else {
            return Err(format!(
                "{name}: {width} valid bits in {bytes}-byte samples: not a PCM layout replay reads"
            ));
        };
        Ok(WavSource {
            info: SourceInfo {
                name,
                channels: (0..nch).map(|i| format!("ch{i}")).collect(),
                rate_hz: f64::from(spec.sample_rate),
                bits,
                signed,
                start_s: 0.0,
            },
            decoder,
            lo,
            hi,
            declared,
            read: 0,
        })
    }
}

impl FrameSource for WavSource {
    fn info(&self) -> &SourceInfo {
        &self.info
    }
    fn read(&mut self, buf: &mut [i32]) -> Result<usize, String> {
        let nch = self.info.channels.len();
        let (lo, hi, bits) = (self.lo, self.hi, self.info.bits);
        let name = &self.info.name;
        let declared = self.declared;
        let start = self.read;
        let frame_of = |index: u64| (index / nch as u64, index % nch as u64);
        let range_error = |index: u64, v: i32, signed: bool| {
            let how = if signed {
                "two's-complement"
            } else {
                "unsigned (as --bits is below the PCM width)"
            };
            let (f, c) = frame_of(index);
            format!(
                "{name}: frame {f}, channel ch{c}: sample {v} is out of range for {bits}-bit \
                 {how} codes ({lo} to {hi}); see --bits"
            )
        };
        let mut got = 0usize;
        match &mut self.decoder {
            Decoder::Hound(reader) => {
                let mut samples = reader.samples::<i32>();
                for slot in buf.iter_mut() {
                    match samples.next() {
                        None => break,
                        Some(Ok(v)) => {
                            if v < lo || v > hi {
                                return Err(range_error(start + got as u64, v, self.info.signed));
                            }
                            *slot = v;
                            got += 1;
                        }
                        Some(Err(e)) => {
                            let at = start + got as u64;
                            return Err(format!(
                                "{name}: truncated WAV: the header declares {declared} samples \
                                 but sample {at} (frame {}) cannot be read: {e}",
                                at / nch as u64
                            ));
                        }
                    }
                }
            }
            Decoder::Padded {
                reader,
                bytes,
                shift,
                raw,
            } => {
                let left = usize::try_from(declared - start).unwrap_or(usize::MAX);
                let want = buf.len().min(left) * *bytes;
                raw.resize(want, 0);
                let mut filled = 0;
                while filled < want {
                    match raw.get_mut(filled..).map(|r| reader.read(r)) {
                        Some(Ok(0)) | None => break,
                        Some(Ok(n)) => filled += n,
                        Some(Err(e)) if e.kind() == std::io::ErrorKind::Interrupted => {}
                        Some(Err(e)) => return Err(format!("{name}: cannot read: {e}")),
                    }
                }
                let pad_mask = (1i32 << *shift) - 1;
                for (k, (cell, slot)) in raw
                    .get(..filled - filled % *bytes)
                    .unwrap_or(&[])
                    .chunks_exact(*bytes)
                    .zip(buf.iter_mut())
                    .enumerate()
                {
                    // Sign-extend the little-endian container.
                    let mut word = [0u8; 4];
                    for (w, b) in word.iter_mut().skip(4 - *bytes).zip(cell) {
                        *w = *b;
                    }
                    let v = i32::from_le_bytes(word) >> (8 * (4 - *bytes) as u32);
                    let index = start + k as u64;
                    if v & pad_mask != 0 {
                        let (f, c) = frame_of(index);
                        return Err(format!(
                            "{name}: frame {f}, channel ch{c}: container value {v} has nonzero \
                             padding bits below its {} valid bits; WAVE_FORMAT_EXTENSIBLE \
                             stores samples left-justified",
                            8 * *bytes as u32 - *shift
                        ));
                    }
                    let v = v >> *shift;
                    if v < lo || v > hi {
                        return Err(range_error(index, v, self.info.signed));
                    }
                    *slot = v;
                    got += 1;
                }
            }
        }
        self.read += got as u64;
        if !got.is_multiple_of(nch) {
            return Err(format!(
                "{name}: truncated WAV: the data ends inside frame {} ({} of {nch} channels)",
                self.read / nch as u64,
                got % nch
            ));
        }
        if got == 0 && self.read < declared {
            return Err(format!(
                "{name}: truncated WAV: the header declares {declared} samples but the data \
                 ends after {}",
                self.read
            ));
        }
        Ok(got / nch)
    }
}
