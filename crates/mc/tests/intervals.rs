//! The coverage intervals found without a full sort equal those from
//! sorting every value (JCGM 101:2008, 7.7), on data of many shapes.

use incertus_mc::stats::{
    interval_count, shortest_interval, summarize, summarize_sorted, symmetric_interval,
};
use proptest::prelude::*;

fn data(kind: u8, n: usize, seed: u64) -> Vec<f64> {
    // A small deterministic generator (SplitMix64) keeps the test free of
    // the engine's own streams.
    let mut s = seed;
    let mut next = move || {
        s = s.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = s;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    };
    (0..n)
        .map(|_| {
            let u = next();
            match kind % 6 {
                0 => u,                                                                 // uniform
                1 => (u * 7.0).floor(),      // heavy ties
                2 => 1.0 / (1e-9 + u) - 1.0, // heavy right tail
                3 => (-(1.0 - u).ln()).powi(3) * if next() < 0.5 { -1.0 } else { 1.0 }, // heavy both tails
                4 => 1e9 + u * 1e-3, // large offset, small spread
                _ => (u - 0.5).signum() * (u - 0.5).abs().sqrt(), // U-shaped
            }
        })
        .collect()
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    #[test]
    fn fast_intervals_equal_sorted_intervals(kind in 0u8..6, n in 70_000usize..200_000, seed in 0u64..1_000_000, p in prop::sample::select(vec![0.6827, 0.9, 0.95, 0.99])) {
        let v = data(kind, n, seed);
        let fast = summarize(&mut v.clone(), p, 40, None);
        let slow = summarize_sorted(&mut v.clone(), p, 40);
        if kind % 6 == 0 {
            prop_assert!(!fast.sorted_in_full, "the fast path is exercised");
        }
        prop_assert_eq!(fast.symmetric, slow.symmetric);
        prop_assert_eq!(fast.shortest, slow.shortest);
        prop_assert_eq!(fast.histogram.counts.iter().sum::<u64>() + fast.histogram.below + fast.histogram.above, n as u64);
    }
}

#[test]
fn interval_indices_follow_clause_7_7() {
    // JCGM 101:2008, 7.7.1: q = pM when whole, else ⌊pM + ½⌋; the
    // probabilistically symmetric interval is [y_(r), y_(r+q)] with
    // r = (M − q)/2, or (M − q + 1)/2 when that is not whole.
    assert_eq!(interval_count(1_000_000, 0.95), 950_000);
    assert_eq!(interval_count(1001, 0.95), 951); // 950.95 + 0.5 → 951
    let v: Vec<f64> = (1..=1000).map(|i| i as f64).collect();
    // q = 950, r = 25: [y_(25), y_(975)].
    assert_eq!(symmetric_interval(&v, 0.95), [25.0, 975.0]);
    let v: Vec<f64> = (1..=1001).map(|i| i as f64).collect();
    // q = 951, M − q = 50, r = 25: [y_(25), y_(976)].
    assert_eq!(symmetric_interval(&v, 0.95), [25.0, 976.0]);
    // Shortest: all widths equal on a uniform grid, ties go to the lowest r.
    assert_eq!(shortest_interval(&v, 0.95), [1.0, 952.0]);
}
