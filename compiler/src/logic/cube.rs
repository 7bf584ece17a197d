//! Cubes (product terms) over at most 64 Boolean variables.
//!
//! A cube is a pair of bit masks in *minterm bit positions*: for a function of `n`
//! variables, variable `i` (0-based, in `vars` order) is bit `n - 1 - i` of a minterm
//! number, so variable 0 is the most significant bit (DESIGN.md: "first = most
//! significant"). `care` has a 1 for every variable that appears as a literal, `value`
//! gives that literal's phase (1 = true, 0 = complemented) and is always 0 outside
//! `care`. A minterm is the cube with every variable cared for.
//!
//! The cube string of a cube over `n` variables has `n` characters, character `i` for
//! variable `i`: `1` (true literal), `0` (complemented literal) or `-` (absent).
//!
//! Every operation here is O(1) word arithmetic (a few popcounts), except the string
//! conversions and minterm enumeration.

/// Mask with the low `n` bits set (`n <= 64`).
pub fn full_mask(n: usize) -> u64 {
    if n >= 64 {
        u64::MAX
    } else {
        (1u64 << n) - 1
    }
}

/// Bit of variable `var` in a minterm number of a function of `n` variables.
pub fn var_bit(n: usize, var: usize) -> u64 {
    1u64 << (n - 1 - var)
}

/// A product term: the set of minterms that agree with `value` on the `care` bits.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct Cube {
    /// Phase of each cared variable (1 = true literal); zero outside `care`.
    pub value: u64,
    /// One bit per variable that appears as a literal.
    pub care: u64,
}

impl Cube {
    /// The universal cube (no literal: the constant-1 product).
    pub const UNIVERSE: Cube = Cube { value: 0, care: 0 };

    /// A cube from masks; bits of `value` outside `care` are cleared.
    pub fn new(value: u64, care: u64) -> Cube {
        Cube {
            value: value & care,
            care,
        }
    }

    /// The minterm `m` of a function of `n` variables, as a cube.
    pub fn minterm(n: usize, m: u64) -> Cube {
        Cube::new(m, full_mask(n))
    }

    /// Parses a cube string such as `"1-0-"` (character `i` = variable `i`).
    pub fn parse(s: &str) -> Result<Cube, String> {
        let n = s.chars().count();
        if n > 64 {
            return Err(format!(
                "cube `{s}` has {n} variables; at most 64 are supported"
            ));
        }
        let mut cube = Cube::UNIVERSE;
        for (i, ch) in s.chars().enumerate() {
            let bit = var_bit(n, i);
            match ch {
                '1' => {
                    cube.care |= bit;
                    cube.value |= bit;
                }
                '0' => cube.care |= bit,
                '-' => {}
                other => {
                    return Err(format!(
                        "cube `{s}`: character {other:?} at {i}; expected `0`, `1` or `-`"
                    ))
                }
            }
        }
        Ok(cube)
    }

    /// The cube string over `n` variables (character `i` = variable `i`).
    pub fn to_string(&self, n: usize) -> String {
        (0..n)
            .map(|i| {
                let bit = var_bit(n, i);
                if self.care & bit == 0 {
                    '-'
                } else if self.value & bit != 0 {
                    '1'
                } else {
                    '0'
                }
            })
            .collect()
    }

    /// Number of literals (cared variables).
    pub fn literals(&self) -> usize {
        self.care.count_ones() as usize
    }

    /// Whether every minterm of `other` is a minterm of `self`.
    pub fn contains(&self, other: &Cube) -> bool {
        self.care & !other.care == 0 && (self.value ^ other.value) & self.care == 0
    }

    /// Whether minterm `m` lies in the cube.
    pub fn contains_minterm(&self, m: u64) -> bool {
        (m ^ self.value) & self.care == 0
    }

    /// Variables on which the two cubes have opposite literals.
    pub fn conflict(&self, other: &Cube) -> u64 {
        (self.value ^ other.value) & self.care & other.care
    }

    /// Number of variables with opposite literals (0 = the cubes intersect).
    pub fn distance(&self, other: &Cube) -> usize {
        self.conflict(other).count_ones() as usize
    }

    /// The common minterms of two cubes, if any.
    pub fn intersect(&self, other: &Cube) -> Option<Cube> {
        if self.conflict(other) != 0 {
            None
        } else {
            Some(Cube {
                value: self.value | other.value,
                care: self.care | other.care,
            })
        }
    }

    /// The consensus of two cubes at distance exactly 1: the largest cube that lies in
    /// their union and spans both (the opposed variable dropped). `None` otherwise.
    pub fn consensus(&self, other: &Cube) -> Option<Cube> {
        let conflict = self.conflict(other);
        if conflict.count_ones() != 1 {
            return None;
        }
        let care = (self.care | other.care) & !conflict;
        Some(Cube::new(self.value | other.value, care))
    }

    /// The cofactor of `self` with respect to cube `by`: `None` if they do not
    /// intersect, otherwise `self` with the variables cared for by `by` dropped.
    pub fn cofactor(&self, by: &Cube) -> Option<Cube> {
        if self.conflict(by) != 0 {
            None
        } else {
            Some(Cube::new(self.value, self.care & !by.care))
        }
    }

    /// The smallest cube containing both.
    pub fn supercube(&self, other: &Cube) -> Cube {
        let care = self.care & other.care & !(self.value ^ other.value);
        Cube::new(self.value, care)
    }

    /// Number of minterms in a function of `n` variables (saturates at `u64::MAX`).
    pub fn minterm_count(&self, n: usize) -> u64 {
        let free = n.saturating_sub(self.literals());
        if free >= 64 {
            u64::MAX
        } else {
            1u64 << free
        }
    }

    /// Calls `visit` on every minterm of the cube in a function of `n` variables
    /// (2^(n - literals) calls: only for small `n`).
    pub fn for_each_minterm(&self, n: usize, mut visit: impl FnMut(u64)) {
        let free = full_mask(n) & !self.care;
        // Enumerate the subsets of `free` (Gosper-free carry trick).
        let mut sub: u64 = 0;
        loop {
            visit(self.value | sub);
            sub = sub.wrapping_sub(free) & free;
            if sub == 0 {
                break;
            }
        }
    }
}

/// Cost of a cover: literals first, then products (lexicographic).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub struct CoverCost {
    /// Total number of literals.
    pub literals: usize,
    /// Number of products.
    pub products: usize,
}

impl CoverCost {
    /// The cost of a list of cubes.
    pub fn of(cubes: &[Cube]) -> CoverCost {
        CoverCost {
            literals: cubes.iter().map(Cube::literals).sum(),
            products: cubes.len(),
        }
    }
}

/// Removes cubes contained in another cube of the list (single-cube containment).
pub fn remove_contained(cubes: &mut Vec<Cube>) {
    cubes.sort_unstable_by_key(|c| (c.literals(), c.care, c.value));
    cubes.dedup();
    let mut kept: Vec<Cube> = Vec::with_capacity(cubes.len());
    for c in cubes.iter() {
        if !kept.iter().any(|k| k.contains(c)) {
            kept.push(*c);
        }
    }
    *cubes = kept;
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parse_and_print_round_trip_with_msb_first() {
        let c = Cube::parse("1-0-").unwrap();
        // variable 0 is bit 3, variable 2 is bit 1.
        assert_eq!(c.care, 0b1010);
        assert_eq!(c.value, 0b1000);
        assert_eq!(c.to_string(4), "1-0-");
        assert_eq!(c.literals(), 2);
        assert!(Cube::parse("1x").is_err());
    }

    #[test]
    fn containment_intersection_distance() {
        let a = Cube::parse("1---").unwrap();
        let b = Cube::parse("1-0-").unwrap();
        let c = Cube::parse("0-0-").unwrap();
        assert!(a.contains(&b));
        assert!(!b.contains(&a));
        assert_eq!(a.distance(&c), 1);
        assert!(a.intersect(&c).is_none());
        assert_eq!(
            Cube::parse("1---")
                .unwrap()
                .intersect(&Cube::parse("--01").unwrap()),
            Some(Cube::parse("1-01").unwrap())
        );
        assert_eq!(b.consensus(&c), Some(Cube::parse("--0-").unwrap()));
        assert_eq!(
            Cube::parse("11--")
                .unwrap()
                .consensus(&Cube::parse("0-1-").unwrap()),
            Some(Cube::parse("-11-").unwrap())
        );
        assert!(a.consensus(&b).is_none());
    }

    #[test]
    fn cofactor_and_minterms() {
        let f = Cube::parse("1-01").unwrap();
        let by = Cube::parse("1---").unwrap();
        assert_eq!(f.cofactor(&by), Some(Cube::parse("--01").unwrap()));
        assert_eq!(f.cofactor(&Cube::parse("0---").unwrap()), None);
        let mut ms = Vec::new();
        Cube::parse("1-0-")
            .unwrap()
            .for_each_minterm(4, |m| ms.push(m));
        ms.sort();
        assert_eq!(ms, vec![0b1000, 0b1001, 0b1100, 0b1101]);
        assert_eq!(Cube::parse("1-0-").unwrap().minterm_count(4), 4);
        let mut one = Vec::new();
        Cube::UNIVERSE.for_each_minterm(0, |m| one.push(m));
        assert_eq!(one, vec![0]);
    }
}
