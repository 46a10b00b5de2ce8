//! The camera's native bit depth and sample step, from what the files and the manifest state and
//! what the samples show.
//!
//! Many cameras write 10-, 12- or 14-bit samples into 16-bit files shifted to the top (every
//! value a multiple of 2^(16 − b)); others write them at the bottom (values never above
//! 2^b − 1). The step found here divides every DN figure so that they come out in the camera's
//! own DN, and quantization is 1/12 of that DN. No statistics here beyond the samples' OR and
//! maximum, which the stack accumulators keep.

use serde::Serialize;

use super::stack::StackStats;

/// How the native depth was established.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum DepthSource {
    /// The manifest's `significant_bits`.
    Manifest,
    /// The PNG files' `sBIT` chunk.
    PngSbit,
    /// A PGM maxval of 2^b − 1 or a raw geometry's `bits` below the container's depth.
    FileRange,
    /// The samples alone: the largest power of two dividing all of them.
    Samples,
}

/// The depth of the data, as the analysis uses it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct SampleDepth {
    /// Bits per sample of the files (8 or 16).
    pub container_bits: u8,
    /// Container DN per native DN: a power of two (16 for 12-bit samples at the top of 16).
    pub step_dn: u16,
    /// The camera's bits per sample, when known (also the measured `adc_bits`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub native_bits: Option<u8>,
    /// How it was established.
    pub source: DepthSource,
    /// Samples never above 2^b − 1 with b below the container's: likely b-bit data at the
    /// bottom of the container, which the data alone cannot tell from a dim series.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub likely_lsb_bits: Option<u8>,
}

/// Why the stated depth cannot be right for these samples.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DepthContradiction {
    /// Where the statement came from (`significant_bits`, `the PNG sBIT chunk`).
    pub key: &'static str,
    /// The bits stated.
    pub stated_bits: u8,
    /// What the samples show, lower case.
    pub found: String,
}

/// Bits needed to write `v` (0 for 0).
fn bit_length(v: u16) -> u8 {
    // OK because a u16 has at most 16 significant bits.
    #[allow(clippy::cast_possible_truncation)]
    let n = (u16::BITS - v.leading_zeros()) as u8;
    n
}

/// The native depth of a series of stacks, given the manifest's `significant_bits`.
///
/// # Formula
/// ```text
/// W = b_file if the files state LSB-aligned b_file bits, else the container's bits
/// t = trailing zeros of (OR of every sample)        (0 when every sample is 0)
/// stated b (manifest, else sBIT): t ≥ W − b → step 2^(W − b)   (MSB-aligned)
///                                 max < 2^b  → step 1           (LSB-aligned, manifest only)
///                                 otherwise a contradiction
/// nothing stated:                 step 2^t, native bits W − t
/// ```
/// # Source
/// Common practice, no source: MSB alignment is how 10/12/14-bit camera data is commonly
/// written into 16-bit containers; PNG's sBIT states it (PNG 1.2 §4.2.6, from memory).
///
/// # Errors
/// A [`DepthContradiction`] when a stated depth does not fit the samples.
pub fn sample_depth(
    stacks: &[StackStats],
    stated: Option<u8>,
) -> Result<SampleDepth, DepthContradiction> {
    let container = stacks
        .iter()
        .map(|s| s.samples.container_bits)
        .max()
        .unwrap_or(16)
        .max(1);
    let or = stacks.iter().fold(0u16, |a, s| a | s.samples.or);
    let max = stacks.iter().map(|s| s.samples.max).max().unwrap_or(0);
    let agreed = |f: &dyn Fn(&StackStats) -> Option<u8>| -> Option<u8> {
        let first = stacks.first().and_then(f)?;
        stacks.iter().all(|s| f(s) == Some(first)).then_some(first)
    };
    let file_lsb = agreed(&|s| s.significant_bits).filter(|b| *b < container);
    let width = file_lsb.unwrap_or(container);
    // OK because trailing_zeros of a non-zero u16 is at most 15.
    #[allow(clippy::cast_possible_truncation)]
    let zeros = if or == 0 {
        0
    } else {
        (or.trailing_zeros() as u8).min(width.saturating_sub(1))
    };
    let sbit = agreed(&|s| s.samples.msb_bits).filter(|b| *b < container);
    let statement = match (stated, sbit) {
        (Some(b), _) => Some((b, "significant_bits", DepthSource::Manifest)),
        (None, Some(b)) => Some((b, "the PNG sBIT chunk", DepthSource::PngSbit)),
        (None, None) => None,
    };
    if let Some((bits, key, source)) = statement {
        if bits > width {
            return Err(DepthContradiction {
                key,
                stated_bits: bits,
                found: format!("the files hold {width}-bit samples"),
            });
        }
        let need = width - bits;
        if zeros >= need {
            return Ok(SampleDepth {
                container_bits: container,
                step_dn: 1u16 << need,
                native_bits: Some(bits),
                source,
                likely_lsb_bits: None,
            });
        }
        if source == DepthSource::Manifest && bit_length(max) <= bits {
            return Ok(SampleDepth {
                container_bits: container,
                step_dn: 1,
                native_bits: Some(bits),
                source,
                likely_lsb_bits: None,
            });
        }
        return Err(DepthContradiction {
            key,
            stated_bits: bits,
            found: format!(
                "the samples are not all multiples of {} (as {bits}-bit samples at the top of \
                 {width} bits would be){}",
                1u32 << need,
                if source == DepthSource::Manifest {
                    format!(
                        ", and reach {max}, above the {} of {bits}-bit samples at the bottom",
                        (1u32 << bits) - 1
                    )
                } else {
                    String::new()
                }
            ),
        });
    }
    let native = width - zeros;
    let used = bit_length(max);
    let likely_lsb =
        (file_lsb.is_none() && zeros == 0 && used < container && max > 0).then_some(used);
    let known = zeros > 0 || file_lsb.is_some() || used == container;
    Ok(SampleDepth {
        container_bits: container,
        step_dn: 1u16 << zeros,
        native_bits: known.then_some(native),
        source: if file_lsb.is_some() && zeros == 0 {
            DepthSource::FileRange
        } else {
            DepthSource::Samples
        },
        likely_lsb_bits: likely_lsb,
    })
}
