//! Random-function tests of the two-level minimizers: validity of every cover, the
//! exact method against an independent brute-force minimum, and the heuristic on wide
//! cube-list functions and against the exact method.

use detent_compiler::logic::cube::CoverCost;
use detent_compiler::logic::cube::{full_mask, Cube};
use detent_compiler::logic::{
    check_cover, check_cube_cover, gates, minimize, minimize_cubes, Cover, Function, Method,
};
use detent_compiler::testing::logic::{
    planted_cube_function, random_cube_function, random_function, Rng,
};

/// Brute-force minimum cost (literals, then products) by dynamic programming over
/// subsets of the on-set, with ALL implicants (every cube of the 3^n that avoids the
/// off-set) as candidates. Independent of the prime generation and of the cover search.
fn brute_force_minimum(f: &Function) -> CoverCost {
    let n = f.vars.len();
    let mut allowed = vec![false; 1 << n];
    for &m in f.on.iter().chain(f.dc.iter()) {
        allowed[m as usize] = true;
    }
    let mut on: Vec<u64> = f.on.clone();
    on.sort_unstable();
    on.dedup();
    let k = on.len();
    assert!(k <= 18, "brute force limited to 18 on-minterms");
    // All cubes: each variable 0, 1 or absent.
    let mut implicants: Vec<(u32, usize)> = Vec::new(); // (covered on-mask, literals)
    let mut digits = vec![0u8; n];
    loop {
        let mut care = 0u64;
        let mut value = 0u64;
        for (v, &d) in digits.iter().enumerate() {
            let bit = 1u64 << (n - 1 - v);
            if d < 2 {
                care |= bit;
                if d == 1 {
                    value |= bit;
                }
            }
        }
        let cube = Cube::new(value, care);
        let mut ok = true;
        cube.for_each_minterm(n, |m| ok &= allowed[m as usize]);
        if ok {
            let mask = on
                .iter()
                .enumerate()
                .filter(|(_, &m)| cube.contains_minterm(m))
                .fold(0u32, |acc, (i, _)| acc | 1 << i);
            if mask != 0 {
                implicants.push((mask, cube.literals()));
            }
        }
        // Next ternary number.
        let mut i = 0;
        while i < n && digits[i] == 2 {
            digits[i] = 0;
            i += 1;
        }
        if i == n {
            break;
        }
        digits[i] += 1;
    }
    let weight = 1000u64;
    let mut best = vec![u64::MAX; 1 << k];
    best[0] = 0;
    for mask in 1u32..(1u32 << k) {
        let low = mask & mask.wrapping_neg();
        let mut b = u64::MAX;
        for &(cov, lits) in &implicants {
            if cov & low != 0 {
                let rest = best[(mask & !cov) as usize];
                b = b.min(rest + lits as u64 * weight + 1);
            }
        }
        best[mask as usize] = b;
    }
    let total = best[(1usize << k) - 1];
    CoverCost {
        literals: (total / weight) as usize,
        products: (total % weight) as usize,
    }
}

#[test]
fn exact_matches_brute_force_on_small_functions() {
    let mut rng = Rng::from_state(0x5eed_0001);
    let mut checked = 0;
    for round in 0..600 {
        let n = 1 + round % 5;
        let on_pm = 150 + rng.below(500);
        let dc_pm = rng.below(300);
        let f = random_function(&mut rng, n, on_pm, dc_pm);
        if f.on.len() > 16 {
            continue;
        }
        let cover = minimize(&f).unwrap();
        check_cover(&f, &cover).unwrap();
        assert_eq!(cover.method, Method::Exact);
        let brute = brute_force_minimum(&f);
        assert_eq!(
            CoverCost::of(&cover.cubes),
            brute,
            "n={n} on={:?} dc={:?} cover={:?}",
            f.on,
            f.dc,
            cover.cube_strings(n)
        );
        checked += 1;
    }
    assert!(checked > 400, "only {checked} functions checked");
}

/// Debug builds (plain `cargo test`) run smaller versions of the slow tests; release
/// builds (`cargo test --release`) the full ones.
const FULL: bool = !cfg!(debug_assertions);

#[test]
fn every_cover_is_valid_on_random_functions() {
    let mut rng = Rng::from_state(0x5eed_0002);
    let (rounds, widths) = if FULL { (60, 13) } else { (20, 9) };
    for round in 0..rounds {
        let n = 2 + round % widths; // 2..=14 (release), 2..=10 (debug)
                                    // Dense up to 8 variables, sparse beyond (keeps the exact search short).
        let (on_pm, dc_pm) = if n <= 8 {
            (100 + rng.below(500), rng.below(300))
        } else {
            (20 + rng.below(40), rng.below(40))
        };
        let f = random_function(&mut rng, n, on_pm, dc_pm);
        let cover = minimize(&f).unwrap();
        check_cover(&f, &cover).unwrap_or_else(|e| panic!("n={n}: {e}"));
        check_cube_cover(&f.to_cubes(), &cover).unwrap_or_else(|e| panic!("n={n}: {e}"));
        // The complement's cover (used for NOR-NOR) is valid as well (dense for the
        // sparse wide functions, so only checked up to 8 variables).
        if n > 8 {
            continue;
        }
        let comp = f.complement().unwrap();
        let comp_cover = minimize(&comp).unwrap();
        check_cover(&comp, &comp_cover).unwrap();
        let nand = gates::two_level_cost(gates::Form::NandNand, &[&cover]);
        assert_eq!(nand.literals, cover.literals);
    }
}

#[test]
fn check_cover_rejects_a_broken_cover() {
    let mut rng = Rng::from_state(0x5eed_0003);
    for _ in 0..50 {
        let f = random_function(&mut rng, 6, 400, 100);
        let cover = minimize(&f).unwrap();
        if cover.cubes.is_empty() {
            continue;
        }
        // Dropping a product of a minimum cover uncovers some on-minterm.
        let mut fewer = cover.clone();
        fewer.cubes.pop();
        fewer.literals = fewer.cubes.iter().map(Cube::literals).sum();
        assert!(check_cover(&f, &fewer).is_err());
        // Adding the universal cube covers off-set minterms (if there are any).
        if f.on.len() + f.dc.len() < 64 {
            let mut more = cover.clone();
            more.cubes.push(Cube::UNIVERSE);
            assert!(check_cover(&f, &more).is_err());
            assert!(check_cube_cover(&f.to_cubes(), &more).is_err());
        }
    }
}

#[test]
fn heuristic_is_valid_on_wide_cube_functions() {
    let mut rng = Rng::from_state(0x5eed_0004);
    let per_width = if FULL { 3 } else { 1 };
    for (k, n) in [20usize, 24, 28, 32, 40].into_iter().enumerate() {
        for _ in 0..per_width {
            let cubes = if FULL { 40 + 10 * k } else { 20 + 5 * k };
            let f = random_cube_function(&mut rng, n, cubes, 8, 350);
            let cover = minimize_cubes(&f).unwrap();
            check_cube_cover(&f, &cover).unwrap_or_else(|e| panic!("n={n}: {e}"));
            let input: usize = f.on.iter().map(Cube::literals).sum();
            assert!(
                cover.literals <= input,
                "n={n}: {} > {input}",
                cover.literals
            );
            for c in &cover.cubes {
                assert_eq!(c.care & !full_mask(n), 0);
            }
        }
    }
}

/// Wide functions with a planted cover: the on-set is `planted` cubes each split into 8
/// sub-cubes; the heuristic must get back to at most the planted literal count (it can
/// find better). Measured numbers are printed.
#[test]
fn heuristic_recovers_planted_covers() {
    let mut rng = Rng::from_state(0x5eed_0006);
    for n in [20usize, 24, 32] {
        let (f, planted) = planted_cube_function(&mut rng, n, 10, 6);
        let cover = minimize_cubes(&f).unwrap();
        check_cube_cover(&f, &cover).unwrap_or_else(|e| panic!("n={n}: {e}"));
        println!(
            "n={n}: {} on-cubes, planted {planted} literals, heuristic {} literals in {} cubes",
            f.on.len(),
            cover.literals,
            cover.cubes.len()
        );
        assert!(
            cover.literals <= planted,
            "n={n}: {} > {planted}",
            cover.literals
        );
    }
}

#[test]
fn heuristic_is_valid_on_more_wide_functions() {
    let mut rng = Rng::from_state(0x5eed_0007);
    for (k, n) in [20usize, 26, 32].into_iter().enumerate() {
        for _ in 0..2 {
            let f = random_cube_function(&mut rng, n, 20 + 10 * k, 4, 250);
            let cover = minimize_cubes(&f).unwrap();
            check_cube_cover(&f, &cover).unwrap_or_else(|e| panic!("n={n}: {e}"));
            let input: usize = f.on.iter().map(Cube::literals).sum();
            assert!(
                cover.literals <= input,
                "n={n}: {} > {input}",
                cover.literals
            );
            for c in &cover.cubes {
                assert_eq!(c.care & !full_mask(n), 0);
            }
        }
    }
}

/// Measured margin of the heuristic over the exact minimum on <= 10 variables (printed;
/// run with `--nocapture`). Asserted loosely: never more than 25% + 2 literals worse.
#[test]
fn heuristic_is_close_to_exact_on_small_functions() {
    let mut rng = Rng::from_state(0x5eed_0005);
    let (mut exact_total, mut heur_total, mut worst) = (0usize, 0usize, 0f64);
    let mut equal = 0;
    let count = 60;
    for round in 0..count {
        let n = 4 + round % 7; // 4..=10
        let f = random_function(&mut rng, n, 333, 167);
        let exact = minimize(&f).unwrap();
        assert_eq!(exact.method, Method::Exact);
        let cf = f.to_cubes();
        let heur: Cover = minimize_cubes(&cf).unwrap();
        check_cover(&f, &heur).unwrap();
        assert!(heur.literals >= exact.literals);
        assert!(
            heur.literals * 4 <= exact.literals * 5 + 8,
            "n={n}: heuristic {} vs exact {}",
            heur.literals,
            exact.literals
        );
        exact_total += exact.literals;
        heur_total += heur.literals;
        equal += usize::from(heur.literals == exact.literals);
        if exact.literals > 0 {
            worst = worst.max(heur.literals as f64 / exact.literals as f64);
        }
    }
    println!(
        "heuristic vs exact (n=4..10, {count} functions): total literals {heur_total} vs \
         {exact_total} (+{:.1}%), equal on {equal}, worst ratio {worst:.3}",
        100.0 * (heur_total as f64 / exact_total as f64 - 1.0)
    );
}
