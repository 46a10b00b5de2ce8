//! The measurement of a manifest's frames: each file read, decoded and accumulated into its
//! stack's accumulator, then the analysis.
//!
//! Driven from outside, one file at a time ([`Measurement`]): it says which file it wants next
//! and which ones after that, and is given each file's bytes in turn. So a caller that reads
//! files slowly (the page's worker, reading what the person chose) can read the next files
//! while this one is analysed, and a caller that reads them at once ([`measure`], the command)
//! loops. Both get the same files in the same order, the same rules, messages and figures. No
//! I/O here.

use std::collections::VecDeque;

use super::manifest::{FrameEntry, Manifest};
use super::{analyse_with, AnalysisOptions, Characterization, StackAccumulator, StackBuffers};
use super::{StackSpec, StackStats};
use crate::frames::{Frame, FrameFile};

/// Why frames could not be measured: the messages, and whether a file could not be read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Failure {
    /// One line each, naming the file or key.
    pub messages: Vec<String>,
    /// True when any file could not be read (the command's exit status 1).
    pub io: bool,
}

/// A `read` for [`measure_buffered`] and [`Measurement::give`]: replace the buffer's contents
/// with the file's bytes (clear it, then fill it), or say why it cannot.
pub type ReadInto<'a> = dyn FnMut(&FrameEntry, &mut Vec<u8>) -> Result<(), String> + 'a;

/// Read, decode and accumulate every stack, then analyse.
///
/// `read` returns a file's bytes, or why it cannot (the message follows the file's name);
/// `seen` is told of each frame entry after its file was read: `Some(frame)` when it decoded,
/// `None` when it could not be read or decoded. One file's bytes are held at a time and dropped
/// once decoded; each stack keeps only what its accumulator needs.
///
/// Every stack is attempted, so that all undecodable files are reported at once.
///
/// # Errors
/// A [`Failure`] listing each unreadable or undecodable file, or why the analysis is impossible.
pub fn measure(
    manifest: &Manifest,
    read: &mut dyn FnMut(&FrameEntry) -> Result<Vec<u8>, String>,
    seen: &mut dyn FnMut(&FrameEntry, Option<&Frame>),
) -> Result<Characterization, Failure> {
    measure_buffered(
        manifest,
        &mut |f, buffer| {
            *buffer = read(f)?;
            Ok(())
        },
        &mut |f, file| seen(f, file.and_then(FrameFile::to_frame).as_ref()),
    )
}

/// As [`measure`], with a `read` that fills a buffer ([`ReadInto`]), and a `seen` told of each
/// file as it was read ([`FrameFile`]: its size and depth; the samples are widened only when
/// summed). The files' buffers go round between the measurement and the stack accumulators
/// ([`StackAccumulator::push_file`]), so a long series is read into the same few buffers.
///
/// # Errors
/// As [`measure`].
pub fn measure_buffered(
    manifest: &Manifest,
    read: &mut ReadInto<'_>,
    seen: &mut dyn FnMut(&FrameEntry, Option<&FrameFile>),
) -> Result<Characterization, Failure> {
    let mut m = Measurement::new(manifest.clone());
    while m.wanted().is_some() {
        m.give(&mut *read, &mut *seen);
    }
    m.finish()
}

/// Stacks of at least this many frames get their spatial summaries in the first pass: a stack
/// that long was most likely taken for the nonuniformity (EMVA 1288: L ≥ 2, more is better),
/// and reading it again would cost more than its summaries; shorter ones are summarised only
/// if the analysis uses them, after a second read of their few frames. Common practice, no
/// source.
const SUMMARY_FRAMES: usize = 4;

/// Whether the first pass makes a stack's spatial summaries ([`SUMMARY_FRAMES`]).
fn summarised_as_read(stack: &[FrameEntry]) -> bool {
    stack.len() >= SUMMARY_FRAMES
}

/// The stack being read: its accumulator, the next of its frames, and what went wrong.
#[derive(Debug)]
struct Reading {
    /// Index in the manifest's stacks.
    stack: usize,
    acc: StackAccumulator,
    next: usize,
    /// Problems with its files, one line each (none: every file so far was accumulated).
    messages: Vec<String>,
    io: bool,
}

/// A measurement in progress, given one file at a time.
///
/// Two passes over the manifest's stacks, in the manifest's order: the first reads every stack
/// (the spatial summaries only for stacks of [`SUMMARY_FRAMES`] or more); after the analysis
/// has picked the stacks its spatial report uses (one dark and one flat, per channel for
/// colour), the second reads those of them that were short again, with their summaries, and
/// the analysis runs once more. The moments are the same, so it picks the same stacks.
///
/// Use: while [`Measurement::wanted`] names a file, [`Measurement::give`] it; then
/// [`Measurement::finish`]. [`Measurement::upcoming`] lists the files wanted after the next
/// one, as far as they are known (the second pass is known once the first has ended), for
/// reading ahead.
#[derive(Debug)]
pub struct Measurement {
    manifest: Manifest,
    /// Whether this is the second pass.
    second: bool,
    /// Stacks still to read in this pass, after the current one.
    queue: VecDeque<usize>,
    current: Option<Reading>,
    /// The statistics of the stacks read, in the manifest's order, and each one's index in
    /// the manifest's stacks.
    stats: Vec<StackStats>,
    stats_of: Vec<usize>,
    messages: Vec<String>,
    io: bool,
    /// The first pass's analysis, once made.
    first: Option<Characterization>,
    /// Whether the second pass replaced any stack's statistics.
    again: bool,
    /// How it ended, once it has.
    outcome: Option<Result<Characterization, Failure>>,
    file: FrameFile,
    buffers: StackBuffers,
}

impl Measurement {
    /// Start measuring a checked manifest's frames.
    #[must_use]
    pub fn new(manifest: Manifest) -> Self {
        let stacks = manifest.stacks.len();
        let mut m = Measurement {
            manifest,
            second: false,
            queue: (0..stacks).collect(),
            current: None,
            stats: Vec::new(),
            stats_of: Vec::new(),
            messages: Vec::new(),
            io: false,
            first: None,
            again: false,
            outcome: None,
            file: FrameFile::default(),
            buffers: StackBuffers::default(),
        };
        m.advance();
        m
    }

    /// The file to give next, or `None` once every file has been given.
    #[must_use]
    pub fn wanted(&self) -> Option<&FrameEntry> {
        let r = self.current.as_ref()?;
        self.manifest.stacks.get(r.stack)?.get(r.next)
    }

    /// The next `n` files this pass will want, [`Measurement::wanted`] first (fewer near the
    /// end of a pass: the second pass is not known before the first has ended). A stack whose
    /// accumulator cannot start is listed though its files will not be wanted.
    #[must_use]
    pub fn upcoming(&self, n: usize) -> Vec<&FrameEntry> {
        let Some(r) = &self.current else {
            return Vec::new();
        };
        let stack = |i: usize| self.manifest.stacks.get(i).map_or(&[][..], Vec::as_slice);
        let rest = stack(r.stack).get(r.next..).unwrap_or_default();
        rest.iter()
            .chain(self.queue.iter().flat_map(|&i| stack(i).iter()))
            .take(n)
            .collect()
    }

    /// Whether this file's frame is being read in the second pass (its progress was already
    /// told in the first).
    #[must_use]
    pub fn rereading(&self) -> bool {
        self.second
    }

    /// Give the wanted file: `read` fills the buffer with its bytes or says why it cannot;
    /// `seen` is told of the file once read (`None`: unreadable or undecodable), in the first
    /// pass only. Does nothing once every file has been given.
    pub fn give(
        &mut self,
        read: &mut ReadInto<'_>,
        seen: &mut dyn FnMut(&FrameEntry, Option<&FrameFile>),
    ) {
        let Some(r) = self.current.as_mut() else {
            return;
        };
        let Some(f) = self
            .manifest
            .stacks
            .get(r.stack)
            .and_then(|s| s.get(r.next))
        else {
            return;
        };
        let second = self.second;
        let mut tell = |f: &FrameEntry, file: Option<&FrameFile>| {
            if !second {
                seen(f, file);
            }
        };
        r.next += 1;
        let name = format!("frames[{}] ({})", f.index, f.path);
        if let Err(e) = read(f, self.file.bytes_mut()) {
            r.messages.push(format!("{name}: {e}"));
            r.io = true;
            tell(f, None);
        } else if let Err(e) = self.file.decode(f.raw) {
            r.messages.push(format!("{name}: {e}"));
            tell(f, None);
        } else {
            tell(f, Some(&self.file));
            // After a problem the stack's figures are lost anyway; only its files are checked.
            if r.messages.is_empty() {
                if let Err(e) = r.acc.push_file(&mut self.file) {
                    r.messages.push(format!("{name}: {e}"));
                }
            }
        }
        let finished = self
            .manifest
            .stacks
            .get(r.stack)
            .is_none_or(|s| r.next >= s.len());
        if finished {
            self.end_stack();
            self.advance();
        }
    }

    /// The characterization, or why there is none. Before every file was given: a failure
    /// saying which file was still wanted.
    ///
    /// # Errors
    /// A [`Failure`] listing each unreadable or undecodable file, or why the analysis is
    /// impossible.
    pub fn finish(self) -> Result<Characterization, Failure> {
        if let Some(outcome) = self.outcome {
            return outcome;
        }
        let which = self.wanted().map_or_else(String::new, |f| {
            format!(": frames[{}] ({})", f.index, f.path)
        });
        Err(Failure {
            messages: vec![format!(
                "the measurement ended before every file was read{which}"
            )],
            io: false,
        })
    }

    /// The current stack has had all its files: keep its statistics or its problems.
    fn end_stack(&mut self) {
        let Some(r) = self.current.take() else { return };
        let first_index = self
            .manifest
            .stacks
            .get(r.stack)
            .and_then(|s| s.first())
            .map_or(0, |f| f.index);
        let (result, kept) = r.acc.finish_with_buffers();
        self.buffers = kept;
        let problems = if !r.messages.is_empty() {
            Err((r.messages, r.io))
        } else {
            match result {
                Ok(s) => {
                    match self.stats_of.iter().position(|&i| i == r.stack) {
                        Some(k) => {
                            if let Some(slot) = self.stats.get_mut(k) {
                                *slot = s;
                                self.again = true;
                            }
                        }
                        None => {
                            self.stats.push(s);
                            self.stats_of.push(r.stack);
                        }
                    }
                    Ok(())
                }
                Err(e) => Err((vec![format!("frames[{first_index}]: {e}")], r.io)),
            }
        };
        if let Err((lines, io)) = problems {
            if self.second {
                // A file that read the first time and not the second: stop here.
                self.end(Err(Failure {
                    messages: lines,
                    io,
                }));
            } else {
                self.messages.extend(lines);
                self.io |= io;
            }
        }
    }

    /// Start the next stack of this pass, or the second pass, or end.
    fn advance(&mut self) {
        while self.current.is_none() && self.outcome.is_none() {
            let Some(i) = self.queue.pop_front() else {
                self.end_pass();
                continue;
            };
            let Some(stack) = self.manifest.stacks.get(i) else {
                continue;
            };
            let Some(first) = stack.first() else {
                continue;
            };
            let spec = StackSpec {
                kind: first.kind,
                exposure_time_s: first.exposure_time_s,
                level: first.level.clone(),
                photons_per_pixel: first.photons_per_pixel,
                frames: u32::try_from(stack.len()).unwrap_or(u32::MAX),
            };
            let summaries = self.second || summarised_as_read(stack);
            let acc = StackAccumulator::with_buffers(
                spec,
                self.manifest.roi,
                self.manifest.cfa,
                std::mem::take(&mut self.buffers),
            );
            match acc {
                Ok(a) => {
                    self.current = Some(Reading {
                        stack: i,
                        acc: if summaries { a } else { a.without_summaries() },
                        next: 0,
                        messages: Vec::new(),
                        io: false,
                    });
                }
                Err(e) => {
                    let line = format!("frames[{}]: {e}", first.index);
                    if self.second {
                        self.end(Err(Failure {
                            messages: vec![line],
                            io: false,
                        }));
                    } else {
                        self.messages.push(line);
                    }
                }
            }
        }
    }

    /// Every stack of this pass has been read: analyse, and queue the second pass or end.
    fn end_pass(&mut self) {
        if !self.messages.is_empty() {
            let messages = std::mem::take(&mut self.messages);
            let io = self.io;
            self.end(Err(Failure { messages, io }));
            return;
        }
        if self.second {
            let result = if self.again {
                self.analysis()
            } else {
                self.first.take().ok_or_else(|| Failure {
                    messages: vec!["analysis: no result was kept".into()],
                    io: false,
                })
            };
            self.end(result);
            return;
        }
        let first = match self.analysis() {
            Ok(c) => c,
            Err(f) => {
                self.end(Err(f));
                return;
            }
        };
        // The stacks whose summaries the spatial report uses and pass 1 left out.
        let stacks = &self.manifest.stacks;
        self.queue = self
            .stats_of
            .iter()
            .zip(&self.stats)
            .filter(|(&i, s)| {
                stacks
                    .get(i)
                    .is_some_and(|stack| !summarised_as_read(stack))
                    && first.spatial_from.contains(&s.spec)
            })
            .map(|(&i, _)| i)
            .collect();
        self.first = Some(first);
        self.second = true;
    }

    /// The analysis of the stacks' statistics as they are now.
    fn analysis(&self) -> Result<Characterization, Failure> {
        let options = AnalysisOptions {
            cfa: self.manifest.cfa,
            significant_bits: self.manifest.significant_bits,
        };
        analyse_with(&self.stats, options).map_err(|e| Failure {
            messages: vec![format!("analysis: {e}")],
            io: false,
        })
    }

    fn end(&mut self, outcome: Result<Characterization, Failure>) {
        self.queue.clear();
        self.current = None;
        self.file = FrameFile::default();
        self.buffers = StackBuffers::default();
        self.outcome = Some(outcome);
    }
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used, clippy::expect_used, clippy::indexing_slicing)] // test code

    use super::*;
    use crate::ptc::parse_manifest;

    /// A 4 × 2 8-bit PGM with the given samples.
    fn pgm(samples: [u8; 8]) -> Vec<u8> {
        let mut b = b"P5 4 2 255\n".to_vec();
        b.extend(samples);
        b
    }

    #[test]
    fn measure_names_each_bad_file_and_tells_what_it_saw() {
        let m = parse_manifest(
            r#"{"version": 1, "frames": [
                  {"path": "d1.pgm", "kind": "dark", "exposure_time_s": 0.01},
                  {"path": "d2.pgm", "kind": "dark", "exposure_time_s": 0.01},
                  {"path": "f1.pgm", "kind": "flat", "exposure_time_s": 0.01},
                  {"path": "f2.pgm", "kind": "flat", "exposure_time_s": 0.01}
                ]}"#,
        )
        .unwrap();
        let mut seen = Vec::new();
        let got = measure(
            &m,
            &mut |f| match f.path.as_str() {
                "d2.pgm" => Ok(b"P5 4 2 255\n\x01".to_vec()),
                "f2.pgm" => Err("the browser could not read it".into()),
                _ => Ok(pgm([1, 2, 3, 4, 5, 6, 7, 8])),
            },
            &mut |f, frame| seen.push((f.index, frame.map(Frame::width))),
        );
        let Err(failure) = got else {
            unreachable!("{got:?}")
        };
        assert_eq!(seen, [(0, Some(4)), (1, None), (2, Some(4)), (3, None)]);
        assert!(failure.io);
        assert_eq!(failure.messages.len(), 2, "{failure:?}");
        assert!(failure.messages[0].starts_with("frames[1] (d2.pgm): truncated"));
        assert_eq!(
            failure.messages[1],
            "frames[3] (f2.pgm): the browser could not read it"
        );
    }

    /// A dark and a flat stack of two 4 × 2 frames each, and a short flat stack (8-bit PGM,
    /// invented samples).
    fn small_series() -> (Manifest, impl Fn(&FrameEntry) -> Vec<u8>) {
        let m = parse_manifest(
            r#"{"version": 1, "frames": [
                  {"path": "d1.pgm", "kind": "dark", "exposure_time_s": 0.01},
                  {"path": "f1.pgm", "kind": "flat", "exposure_time_s": 0.01},
                  {"path": "d2.pgm", "kind": "dark", "exposure_time_s": 0.01},
                  {"path": "f2.pgm", "kind": "flat", "exposure_time_s": 0.01},
                  {"path": "g1.pgm", "kind": "flat", "exposure_time_s": 0.02},
                  {"path": "g2.pgm", "kind": "flat", "exposure_time_s": 0.02}
                ]}"#,
        )
        .unwrap();
        // Two patterns whose difference has variance 2.5 a unit: dark 1 DN, flats 3 and 5 DN
        // a unit, so the variance grows with the mean as photon transfer needs.
        let bytes = |f: &FrameEntry| {
            let (base, amp): (u8, u8) = match f.path.as_bytes()[0] {
                b'd' => (10, 1),
                b'f' => (100, 3),
                _ => (190, 5),
            };
            let pattern = if f.path.as_bytes()[1] == b'1' {
                [0, 3, 1, 4, 1, 5, 2, 6]
            } else {
                [3, 0, 4, 1, 5, 1, 6, 2]
            };
            pgm(pattern.map(|x| base + x * amp))
        };
        (m, bytes)
    }

    // Derived: the push-driven measurement is the loop of `measure_buffered`, so giving the
    // files by hand, reading ahead with `upcoming`, must want the same files in the same
    // order and end in the same characterization (compared with ==).
    #[test]
    fn given_by_hand_with_reading_ahead_it_equals_measure() {
        let (m, bytes) = small_series();
        let mut order = Vec::new();
        let expected = measure(
            &m,
            &mut |f| {
                order.push(f.index);
                Ok(bytes(f))
            },
            &mut |_, _| {},
        );
        let mut by_hand = Measurement::new(m.clone());
        let mut got_order = Vec::new();
        let mut told = Vec::new();
        while let Some(f) = by_hand.wanted() {
            let ahead: Vec<usize> = by_hand.upcoming(3).iter().map(|e| e.index).collect();
            assert_eq!(ahead.first(), Some(&f.index), "upcoming starts with wanted");
            assert!(ahead.len() <= 3);
            let f = f.clone();
            got_order.push(f.index);
            by_hand.give(
                &mut |e, buf| {
                    assert_eq!(e, &f);
                    *buf = bytes(e);
                    Ok(())
                },
                &mut |e, file| told.push((e.index, file.map(FrameFile::width))),
            );
        }
        assert_eq!(got_order, order);
        assert!(
            order.len() > 6,
            "the short stacks used are read again: {order:?}"
        );
        // Told once per manifest entry, in the first pass only.
        let mut indices: Vec<usize> = told.iter().map(|t| t.0).collect();
        indices.sort_unstable();
        assert_eq!(indices, [0, 1, 2, 3, 4, 5]);
        assert!(told.iter().all(|t| t.1 == Some(4)));
        let got = by_hand.finish();
        assert!(expected.is_ok(), "{expected:?}");
        assert_eq!(got, expected);
    }

    #[test]
    fn upcoming_lists_the_stacks_in_manifest_order() {
        let (m, _) = small_series();
        let by_hand = Measurement::new(m);
        let ahead: Vec<&str> = by_hand
            .upcoming(10)
            .iter()
            .map(|e| e.path.as_str())
            .collect();
        assert_eq!(
            ahead,
            ["d1.pgm", "d2.pgm", "f1.pgm", "f2.pgm", "g1.pgm", "g2.pgm"]
        );
        assert!(!by_hand.rereading());
    }

    #[test]
    fn finishing_early_names_the_file_still_wanted() {
        let (m, _) = small_series();
        let got = Measurement::new(m).finish();
        let Err(failure) = got else {
            unreachable!("{got:?}")
        };
        assert_eq!(
            failure.messages,
            ["the measurement ended before every file was read: frames[0] (d1.pgm)"]
        );
    }

    #[test]
    fn giving_after_the_end_changes_nothing() {
        let (m, bytes) = small_series();
        let mut by_hand = Measurement::new(m);
        while let Some(f) = by_hand.wanted().cloned() {
            by_hand.give(
                &mut |_, buf| {
                    *buf = bytes(&f);
                    Ok(())
                },
                &mut |_, _| {},
            );
        }
        assert!(by_hand.upcoming(4).is_empty());
        by_hand.give(&mut |_, _| Err("not wanted".into()), &mut |_, _| {});
        assert!(by_hand.finish().is_ok());
    }
}
