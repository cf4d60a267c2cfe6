//! WAV files of integer PCM (see the [module docs](super)).

use super::{check_channels, FrameSource};
use std::fs::File;
use std::io::{BufReader, Read};
use std::path::Path;

/// A WAV file of integer PCM (see the module docs).
pub struct WavSource {
    name: String,
    reader: hound::WavReader<Box<dyn Read>>,
    names: Vec<String>,
    rate_hz: f64,
    bits: u8,
    signed: bool,
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
        let reader = hound::WavReader::new(reader).map_err(|e| match e {
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
        Ok(WavSource {
            names: (0..nch).map(|i| format!("ch{i}")).collect(),
            rate_hz: f64::from(spec.sample_rate),
            name,
            reader,
            bits,
            signed,
            lo,
            hi,
            declared,
            read: 0,
        })
    }
}

impl FrameSource for WavSource {
    fn name(&self) -> &str {
        &self.name
    }
    fn channel_names(&self) -> &[String] {
        &self.names
    }
    fn rate_hz(&self) -> f64 {
        self.rate_hz
    }
    fn bits(&self) -> u8 {
        self.bits
    }
    fn signed(&self) -> bool {
        self.signed
    }
    fn read(&mut self, buf: &mut [i32]) -> Result<usize, String> {
        let nch = self.names.len();
        let (lo, hi, bits) = (self.lo, self.hi, self.bits);
        let name = &self.name;
        let declared = self.declared;
        let mut got = 0usize;
        let mut samples = self.reader.samples::<i32>();
        for slot in buf.iter_mut() {
            match samples.next() {
                None => break,
                Some(Ok(v)) => {
                    let index = self.read + got as u64;
                    if v < lo || v > hi {
                        let how = if self.signed {
                            "two's-complement"
                        } else {
                            "unsigned (as --bits is below the PCM width)"
                        };
                        return Err(format!(
                            "{name}: frame {}, channel ch{}: sample {v} is out of range for \
                             {bits}-bit {how} codes ({lo} to {hi}); see --bits",
                            index / nch as u64,
                            index % nch as u64
                        ));
                    }
                    *slot = v;
                    got += 1;
                }
                Some(Err(e)) => {
                    let at = self.read + got as u64;
                    return Err(format!(
                        "{name}: truncated WAV: the header declares {declared} samples but \
                         sample {at} (frame {}) cannot be read: {e}",
                        at / nch as u64
                    ));
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
