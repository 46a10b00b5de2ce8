//! Tests of the region passes: the fused two-pass summaries against the direct definitions of
//! `spatial.rs`, bit for bit, for the whole region and for each phase.

use super::super::spatial::direct::{summarise, SubImage};
use super::*;

/// Pseudo-random values (xorshift, fixed seed) in [base, base + spread).
fn values(n: usize, seed: u64, base: u32, spread: u32) -> Vec<u32> {
    let mut s = seed | 1;
    (0..n)
        .map(|_| {
            s ^= s << 13;
            s ^= s >> 7;
            s ^= s << 17;
            base + (s % u64::from(spread.max(1))) as u32
        })
        .collect()
}

/// The fused passes against the direct form, figure for figure and bit for bit, for the
/// whole region and for each phase.
fn check(w: usize, h: usize, sums: &[u32], dsq: &[u32], frames: u32, pairs: u32) {
    let region = Region {
        sums,
        dsq,
        width: w,
        height: h,
    };
    let max_sum = u64::from(*sums.iter().max().unwrap());
    let rs = region_sums(region, max_sum);
    fn view(
        data: &[u32],
        (w, h): (usize, usize),
        x0: usize,
        y0: usize,
        step: usize,
    ) -> Option<SubImage<'_>> {
        let columns = w.saturating_sub(x0).div_ceil(step);
        let rows = h.saturating_sub(y0).div_ceil(step);
        (columns > 0 && rows > 0 && !data.is_empty()).then_some(SubImage {
            data,
            stride: w,
            x0,
            y0,
            step,
            columns,
            rows,
        })
    }
    let one = |x0, y0, step, temporal: f64| {
        let g = Group {
            x0,
            y0,
            step,
            temporal_variance_dn2: temporal,
        };
        let fused = summarise_groups(region, &rs, &[g], frames, pairs).pop();
        let direct = view(sums, (w, h), x0, y0, step).map(|img| {
            let d = view(dsq, (w, h), x0, y0, step);
            summarise(img, frames, temporal, d, pairs)
        });
        assert_eq!(fused, direct, "{w} × {h}, x0 {x0}, y0 {y0}, step {step}");
    };
    one(0, 0, 1, 3.25);
    for (x0, y0) in [(0, 0), (1, 0), (0, 1), (1, 1)] {
        if w > x0 && h > y0 {
            one(x0, y0, 2, 1.5 + x0 as f64);
        }
    }
    // All four phases at once give the same as one at a time.
    if w > 1 && h > 1 {
        let phases: Vec<Group> = [(0, 0), (1, 0), (0, 1), (1, 1)]
            .iter()
            .map(|&(x0, y0)| Group {
                x0,
                y0,
                step: 2,
                temporal_variance_dn2: 2.0,
            })
            .collect();
        let all = summarise_groups(region, &rs, &phases, frames, pairs);
        // Natively on two threads, two phases each: the same as in one thread.
        assert_eq!(all, summarise_some(region, &rs, &phases, frames, pairs));
        for (g, s) in phases.iter().zip(&all) {
            let single = summarise_groups(region, &rs, &[*g], frames, pairs);
            assert_eq!(Some(s), single.first());
        }
    }
    // The moments are the plain sums of each parity.
    for (i, m) in rs.moments.iter().enumerate() {
        let mut want = Moments::default();
        for (r, row) in sums.chunks_exact(w).enumerate() {
            for (c, v) in row.iter().enumerate() {
                if (r % 2) * 2 + c % 2 == i {
                    want.n += 1;
                    want.s1 += u128::from(*v);
                    want.s2 += u128::from(*v) * u128::from(*v);
                    want.lo = want.lo.min(*v);
                    want.hi = want.hi.max(*v);
                    let d = dsq.get(r * w + c).copied().unwrap_or(0);
                    want.dsq_hi = want.dsq_hi.max(d);
                    want.or |= *v;
                    want.dsq_or |= d;
                }
            }
        }
        assert_eq!(*m, want, "parity {i}");
    }
}

#[test]
fn fused_passes_equal_the_direct_form() {
    // Sizes: odd and even, thinner than a lane block, wider than a spectrogram's line
    // limit, a single pixel; values narrow (few histogram levels), wide, and near 2^32
    // (squares exceed 64 bits per lane block, so the lanes are flushed per pixel).
    for (k, &(w, h)) in [
        (1, 1),
        (2, 1),
        (1, 3),
        (3, 2),
        (5, 7),
        (16, 4),
        (17, 9),
        (33, 31),
        (64, 40),
        (700, 6),
        (6, 1100),
    ]
    .iter()
    .enumerate()
    {
        let n = w * h;
        for (base, spread, frames) in [
            (1000, 7, 4),
            (50_000, 30_000, 16),
            (0, 200, 2),
            (u32::MAX - 5000, 4000, 65_536),
        ] {
            let sums = values(n, k as u64 * 31 + u64::from(spread), base, spread);
            let dsq = values(n, k as u64 + 7, 0, spread.saturating_mul(3));
            check(w, h, &sums, &dsq, frames, frames / 2);
            check(w, h, &sums, &[], frames, frames / 2);
            // Multiples of 16 and of 256 (12-bit samples at the top of 16-bit files).
            if base < 1 << 24 {
                let sums16: Vec<u32> = sums.iter().map(|v| v * 16).collect();
                let dsq256: Vec<u32> = dsq.iter().map(|v| v * 256).collect();
                check(w, h, &sums16, &dsq256, frames, frames / 2);
            }
        }
    }
    // Hot and dark pixels beyond the defect thresholds, and high-noise ones.
    let (w, h) = (40, 30);
    let mut sums = values(w * h, 3, 16_000, 64);
    let mut dsq = values(w * h, 5, 100, 50);
    for i in [5, 77, 401, 999] {
        sums[i] += 4000;
        dsq[i] *= 40;
    }
    sums[600] -= 9000;
    check(w, h, &sums, &dsq, 16, 8);
}

#[test]
fn binner_gives_the_integer_quotient() {
    // bin(x) = ⌊x·B/R⌋ exactly, for every x (multiples of 2^t) of ranges around the table
    // limits and block boundaries, through both lookups.
    for range in (1..600u64).chain([1 << 16, (1 << 16) + 1, (1 << 20) + 3, 4_000_037]) {
        for t in [0u32, 4] {
            let bins = HISTOGRAM_BINS.min(range);
            // Cut-offs a third and two thirds through the range.
            let (from, end) = (16 + 2 * range / 3, 16 + range / 3);
            let b = Binner::new(16, range, bins, 16 | (1 << t), (from, end));
            let direct = matches!(b.lookup, Lookup::Direct { .. });
            assert_eq!(
                direct,
                ((range - 1) >> t) < DIRECT_TABLE_ENTRIES,
                "range {range}"
            );
            let step = ((range / 5000).max(1) >> t << t).max(1 << t);
            let mut x = 0;
            while x < range {
                let v = 16 + u32::try_from(x).unwrap();
                let class = usize::from(u64::from(v) >= from) + 2 * usize::from(u64::from(v) < end);
                let want = (x * bins / range) as usize * CLASSES + class;
                assert_eq!(b.index(v), want, "range {range}, x {x}");
                x += if x % 97 == 0 { 1 << t } else { step };
            }
        }
    }
}
