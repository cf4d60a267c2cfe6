//! Writing renders to files: CSV or WAV samples (the labels beside them
//! are written by [`crate::labels::write`]).
//!
//! - Samples CSV: header row of channel names (optionally `time_s` first),
//!   one row per frame of integer ADC codes; `time_s` = frame index / rate
//!   with 6 decimals.
//! - WAV: one channel per scenario channel, 16-bit integer PCM holding the
//!   ADC codes unchanged, sample rate rounded to whole hertz (WAV headers
//!   hold an integer rate). Codes above 32767 (a 16-bit ADC) cannot be held
//!   unchanged in signed 16-bit PCM, so such scenarios are refused for WAV,
//!   and so is a render whose samples exceed the format's 32-bit size
//!   fields ([`check_wav`]): split it with `--seconds`, or write CSV.
//! - Labels, `FILE.labels.csv` ([`labels_path`]): `channel,kind,start_s,end_s`,
//!   kind `touch` or `field`. For CSV the channel is the scenario's channel
//!   name, as in the CSV header; for WAV it is `ch0`, `ch1`, … (the names
//!   replay gives a WAV's channels), so that every output and its labels
//!   replay, score and tune as they are.
//!
//! All writers stream block by block; memory does not grow with the run.

use crate::render::Render;
use std::io::{self, Seek, Write};
use std::path::{Path, PathBuf};

/// Frames per block when streaming.
pub const BLOCK_FRAMES: usize = 4096;

/// `FILE.labels.csv` beside `output`.
pub fn labels_path(output: &Path) -> PathBuf {
    let mut s = output.as_os_str().to_owned();
    s.push(".labels.csv");
    PathBuf::from(s)
}

fn push_u64(buf: &mut Vec<u8>, mut v: u64) {
    let mut tmp = [0u8; 20];
    let mut i = tmp.len();
    loop {
        i -= 1;
        if let Some(d) = tmp.get_mut(i) {
            *d = b'0' + (v % 10) as u8;
        }
        v /= 10;
        if v == 0 || i == 0 {
            break;
        }
    }
    buf.extend_from_slice(tmp.get(i..).unwrap_or(&[]));
}

/// Streams the whole render as CSV. `progress` gets the frames done so far.
pub fn write_csv<W: Write>(
    r: &mut Render,
    w: &mut W,
    time_column: bool,
    mut progress: impl FnMut(u64),
) -> io::Result<()> {
    let names = r.scenario().channel_names();
    let mut header = String::new();
    if time_column {
        header.push_str("time_s,");
    }
    header.push_str(&names.join(","));
    header.push('\n');
    w.write_all(header.as_bytes())?;
    let nch = r.channels();
    let rate = r.rate_hz();
    let mut block = vec![0u16; BLOCK_FRAMES * nch];
    let mut line = Vec::with_capacity(BLOCK_FRAMES * (nch * 6 + 16));
    loop {
        let start = r.frames_done();
        let n = r.fill(&mut block);
        if n == 0 {
            break;
        }
        line.clear();
        for (k, frame) in block.chunks_exact(nch).take(n).enumerate() {
            if time_column {
                let t = (start + k as u64) as f64 / rate;
                write!(line, "{t:.6},")?;
            }
            for (c, code) in frame.iter().enumerate() {
                if c > 0 {
                    line.push(b',');
                }
                push_u64(&mut line, u64::from(*code));
            }
            line.push(b'\n');
        }
        w.write_all(&line)?;
        progress(r.frames_done());
    }
    Ok(())
}

/// Most bytes of samples a WAV file can hold: its RIFF and data chunk
/// sizes are 32-bit, and the header before the data (at most 80 bytes
/// with the extensible format chunk) counts in the RIFF size.
pub const WAV_MAX_DATA_BYTES: u64 = u32::MAX as u64 - 80;

/// Checks that a render fits a 16-bit WAV file before anything is written:
/// codes of at most 15 bits, at most 65 535 channels, and at most
/// [`WAV_MAX_DATA_BYTES`] of samples (a longer WAV's size fields would
/// wrap, and a reader would see a fraction of it). `name` is how messages
/// call the file.
pub fn check_wav(r: &Render, name: &str) -> Result<hound::WavSpec, String> {
    if r.scenario().adc.bits > 15 {
        return Err(format!(
            "{name}: a {}-bit ADC's codes exceed 32767 and cannot be stored unchanged in \
             16-bit WAV; write CSV instead",
            r.scenario().adc.bits
        ));
    }
    let nch = r.channels();
    let channels = u16::try_from(nch).map_err(|_| format!("{name}: too many channels for WAV"))?;
    let bytes = u128::from(r.frames_total()) * nch as u128 * 2;
    if bytes > u128::from(WAV_MAX_DATA_BYTES) {
        let frame_bytes = 2 * nch as u64;
        let max_s = (WAV_MAX_DATA_BYTES / frame_bytes) as f64 / r.rate_hz();
        return Err(format!(
            "{name}: {bytes} bytes of samples exceed what a WAV file can hold ({} bytes: its \
             size fields are 32-bit); write CSV instead, or at most --seconds {:.0} per file",
            WAV_MAX_DATA_BYTES,
            max_s.floor()
        ));
    }
    Ok(hound::WavSpec {
        channels,
        sample_rate: r.rate_hz().round() as u32,
        bits_per_sample: 16,
        sample_format: hound::SampleFormat::Int,
    })
}

/// Streams the whole render as WAV to `w` (checked by [`check_wav`]
/// first). `name` is how messages call the file.
pub fn write_wav<W: Write + Seek>(
    r: &mut Render,
    w: W,
    name: &str,
    mut progress: impl FnMut(u64),
) -> Result<(), String> {
    let spec = check_wav(r, name)?;
    let nch = r.channels();
    let err = |e: hound::Error| format!("{name}: cannot write WAV: {e}");
    let mut w = hound::WavWriter::new(w, spec).map_err(err)?;
    let mut block = vec![0u16; BLOCK_FRAMES * nch];
    loop {
        let n = r.fill(&mut block);
        if n == 0 {
            break;
        }
        for &code in block.iter().take(n * nch) {
            w.write_sample(i16::try_from(code).unwrap_or(i16::MAX))
                .map_err(err)?;
        }
        progress(r.frames_done());
    }
    w.finalize().map_err(err)
}
