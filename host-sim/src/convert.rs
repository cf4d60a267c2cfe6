//! `humsim convert`: a telemetry capture (`.humtel`) to a CSV log that
//! replay, tune and any spreadsheet read.
//!
//! The CSV has a header `time_s,ch0,ch1,…` and one row per frame: `time_s`
//! is the frame's number on the board's counter divided by the rate (the
//! capture's own clock, as replay reports it), with at least 6 decimals;
//! codes are unsigned offset binary (`0 ..= 2^bits − 1`, as the CSV reader
//! takes them): two's-complement captures get 2^(bits−1) added, which a
//! note on stderr says. Unlike replay, convert carries on across a gap,
//! with a warning naming the missing frames, and writes the frames on both
//! sides with their true times: the jump in `time_s` stays in the file,
//! and replaying the CSV refuses it with its line numbers, so the samples
//! on both sides are never joined unnoticed. Corrupt records, repeats and
//! the rest are warned about as replay does ([`crate::input::telemetry`]).

use crate::console::{self, CliError};
use crate::input::telemetry::{self, Capture, Next};
use crate::outfile::{check_distinct, Kind, OutputFile};
use std::io::Write;
use std::path::Path;

/// What a conversion wrote.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Converted {
    /// Frames written.
    pub frames: u64,
    /// Gaps met.
    pub gaps: u64,
    /// Frames missing in them.
    pub missing: u64,
    /// Corrupt pieces skipped.
    pub corrupt: usize,
}

/// Writes every frame of `capture` to `out` as CSV (see the module docs).
pub fn write_csv(capture: &mut Capture, out: &mut dyn Write) -> Result<Converted, String> {
    let h = capture.header();
    let nch = usize::from(h.channels);
    let rate = f64::from(h.rate_hz);
    // Enough decimals that consecutive frames differ in print: 6, or one
    // more than the rate's digits.
    let decimals = 6.max(h.rate_hz.to_string().len() + 1);
    let shift = if h.signed {
        1i32 << (h.adc_bits - 1)
    } else {
        0
    };
    let io = |e: std::io::Error| format!("cannot write: {e}");
    let mut head = String::from("time_s");
    for c in 0..nch {
        head.push_str(&format!(",ch{c}"));
    }
    writeln!(out, "{head}").map_err(io)?;
    let mut done = Converted::default();
    let mut line = String::new();
    loop {
        match capture.next_item()? {
            Next::Samples { first, codes } => {
                for (k, frame) in codes.chunks_exact(nch).enumerate() {
                    line.clear();
                    let t = (first + k as u64) as f64 / rate;
                    line.push_str(&format!("{t:.decimals$}"));
                    for v in frame {
                        line.push_str(&format!(",{}", v + shift));
                    }
                    writeln!(out, "{line}").map_err(io)?;
                    done.frames += 1;
                }
            }
            Next::Gap { frames, .. } => {
                done.gaps += 1;
                done.missing += frames;
            }
            Next::End => break,
        }
    }
    out.flush().map_err(io)?;
    done.corrupt = capture.corrupt();
    Ok(done)
}

/// Runs `humsim convert INPUT -o OUTPUT`.
pub fn command(input: &Path, output: &Path) -> Result<(), CliError> {
    check_distinct(&[("input", input)], &[("-o", output)])?;
    let name = input.display().to_string();
    if !telemetry::is_capture(input) {
        return Err(CliError::Message(format!(
            "{name}: convert reads telemetry captures (.{}); CSV, WAV and raw logs are \
             replayed as they are",
            telemetry::EXTENSION
        )));
    }
    let mut file = OutputFile::create("-o", output, Kind::Data)?;
    let out_name = file.shown().to_string();
    let mut capture = Capture::open(input, true, telemetry::console_warnings())?;
    let h = capture.header();
    let done = write_csv(&mut capture, file.writer()?).map_err(|m| {
        if m.starts_with("cannot write") {
            format!("{out_name}: {m}")
        } else {
            m
        }
    })?;
    file.commit()?;
    if h.signed {
        console::err(&format!(
            "humsim: note: two's-complement codes written as offset binary (plus {})\n",
            1u32 << (h.adc_bits - 1)
        ))?;
    }
    let gaps = if done.gaps > 0 {
        format!(
            "; {} gaps ({} frames missing): replay of the CSV refuses them by line",
            done.gaps, done.missing
        )
    } else {
        String::new()
    };
    console::err(&format!(
        "humsim: wrote {} frames x {} channels ({} Hz, {} bits) from {name} to {}; {} corrupt \
         pieces skipped{gaps}\n",
        done.frames,
        h.channels,
        h.rate_hz,
        h.adc_bits,
        output.display(),
        done.corrupt
    ))
}
