//! Synthetic boards: the known-optimal grid instance and random benchmark boards.

use crate::model::board::{Board, Copper, Net, Part, Rules, Shape};
use crate::model::footprint::{FootprintSpec, PadShape, PadSpec};
use crate::model::{Point, Rect, Side};

use super::rng::Rng;

/// A square part of side `p` with four pins at its centre ("1" east, "2" north, "3" west,
/// "4" south), so a net's HPWL is exactly the distance between part centres.
fn grid_footprint(p: f64) -> FootprintSpec {
    let s = (p / 4.0).clamp(0.01, 1.0);
    FootprintSpec::Custom {
        pads: (1..=4)
            .map(|k| PadSpec {
                number: k.to_string(),
                at: Point::new(0.0, 0.0),
                size: (s, s),
                shape: PadShape::Rect,
                drill: None,
            })
            .collect(),
        courtyard: Some(Rect::centered(Point::new(0.0, 0.0), p, p)),
    }
}

/// The grid instance: `n` x `n` identical square parts of side `pitch` on an
/// n·pitch x n·pitch board (placement grid = pitch, no clearance), with a two-pin net
/// between each pair of grid neighbours, parts scattered at random.
///
/// Two non-overlapping squares of side p have centres at least p apart along one axis, so
/// each net's HPWL is at least p, and the array itself reaches that bound for every net:
/// the optimum is exactly [`grid_optimum`].
pub fn grid_board(n: u32, pitch: f64, seed: u64) -> Board {
    let mut rng = Rng::new(seed);
    let name = |r: u32, c: u32| format!("G{}", r * n + c + 1);
    // A random permutation of the grid cells (Fisher-Yates): scattered, but not stacked.
    let mut cells: Vec<u32> = (0..n * n).collect();
    for i in (1..cells.len()).rev() {
        let j = rng.below(i as u32 + 1) as usize;
        cells.swap(i, j);
    }
    let mut parts = Vec::with_capacity((n * n) as usize);
    for r in 0..n {
        for c in 0..n {
            let cell = cells[(r * n + c) as usize];
            let x = f64::from(cell % n) * pitch;
            let y = f64::from(cell / n) * pitch;
            parts.push(Part {
                reference: name(r, c),
                footprint: grid_footprint(pitch),
                value: String::new(),
                at: Some(Point::new(x, y)),
                rotation: 0.0,
                side: Side::Top,
                locked: false,
            });
        }
    }
    let mut nets = Vec::new();
    for r in 0..n {
        for c in 0..n {
            if c + 1 < n {
                nets.push(Net {
                    name: format!("H{}_{}", r + 1, c + 1),
                    class: None,
                    pins: vec![format!("{}.1", name(r, c)), format!("{}.3", name(r, c + 1))],
                    weight: 1.0,
                });
            }
            if r + 1 < n {
                nets.push(Net {
                    name: format!("V{}_{}", r + 1, c + 1),
                    class: None,
                    pins: vec![format!("{}.2", name(r, c)), format!("{}.4", name(r + 1, c))],
                    weight: 1.0,
                });
            }
        }
    }
    let h = pitch / 2.0;
    let side = n as f64 * pitch;
    Board {
        name: format!("grid {n} x {n}, pitch {pitch} mm"),
        outline: Shape::Rect {
            min: Point::new(-h, -h),
            max: Point::new(side - h, side - h),
        },
        keepouts: Vec::new(),
        rules: Rules {
            clearance: 0.0,
            placement_grid: pitch,
            ..Rules::default()
        },
        classes: Vec::new(),
        parts,
        nets,
        copper: Copper::default(),
        placement: None,
    }
}

/// Optimal wirelength of the grid instance: 2 n (n - 1) · pitch.
pub fn grid_optimum(n: u32, pitch: f64) -> f64 {
    2.0 * f64::from(n) * f64::from(n.saturating_sub(1)) * pitch
}

/// A random board of `count` parts for benchmarks: a mix of two-pin chips and eight-pin
/// ICs whose nets join parts that sit near each other in a hidden reference arrangement
/// (so the netlist has the locality of a real circuit), plus two supply nets that reach
/// a tenth of the parts each. Board about 40 % full. Parts start unplaced.
pub fn random_board(count: u32, seed: u64) -> Board {
    let mut rng = Rng::new(seed);
    let count = count.max(2);
    let ic = FootprintSpec::Custom {
        pads: (0..8)
            .map(|k| PadSpec {
                number: (k + 1).to_string(),
                at: Point::new(
                    if k < 4 { -2.7 } else { 2.7 },
                    if k < 4 {
                        1.905 - 1.27 * k as f64
                    } else {
                        -1.905 + 1.27 * (k - 4) as f64
                    },
                ),
                size: (1.5, 0.6),
                shape: PadShape::RoundRect,
                drill: None,
            })
            .collect(),
        courtyard: None,
    };
    let mut parts = Vec::with_capacity(count as usize);
    let mut pins_of: Vec<u32> = Vec::with_capacity(count as usize);
    let mut area = 0.0_f64;
    for i in 0..count {
        let is_ic = rng.below(5) == 0;
        let (fp, pins, a) = if is_ic {
            (ic.clone(), 8, 6.9 * 5.7)
        } else {
            (FootprintSpec::Chip("0603".into()), 2, 2.9 * 1.4)
        };
        area += a;
        pins_of.push(pins);
        parts.push(Part {
            reference: format!("{}{}", if is_ic { "U" } else { "R" }, i + 1),
            footprint: fp,
            value: String::new(),
            at: None,
            rotation: 0.0,
            side: Side::Top,
            locked: false,
        });
    }
    // Hidden arrangement: part i sits at cell (i % k, i / k) of a k x k grid.
    let k = (f64::from(count).sqrt().ceil() as u32).max(1);
    let mut free: Vec<Vec<u32>> = pins_of.iter().map(|&n| (1..=n).collect()).collect();
    let mut nets: Vec<Net> = Vec::new();
    // Supply nets first: a tenth of the parts each.
    let refs: Vec<String> = parts.iter().map(|p| p.reference.clone()).collect();
    let pin_name = |part: u32, free: &mut Vec<Vec<u32>>, rng: &mut Rng| -> Option<String> {
        let f = &mut free[part as usize];
        if f.is_empty() {
            return None;
        }
        let j = rng.below(f.len() as u32) as usize;
        let pin = f.swap_remove(j);
        Some(format!("{}.{}", refs[part as usize], pin))
    };
    for name in ["GND", "VCC"] {
        let mut pins = Vec::new();
        for p in 0..count {
            if rng.below(10) == 0
                && let Some(s) = pin_name(p, &mut free, &mut rng)
            {
                pins.push(s);
            }
        }
        if pins.len() >= 2 {
            nets.push(Net {
                name: name.into(),
                class: None,
                pins,
                weight: 1.0,
            });
        }
    }
    // Signal nets: a driver and one to three loads within a few cells of it.
    for p in 0..count {
        while !free[p as usize].is_empty() {
            let Some(first) = pin_name(p, &mut free, &mut rng) else {
                break;
            };
            let mut pins = vec![first];
            let fanout = 1 + rng.below(3);
            let (px, py) = (p % k, p / k);
            for _ in 0..fanout {
                for _try in 0..8 {
                    let qx = (i64::from(px) + rng.symmetric(2)).clamp(0, i64::from(k) - 1) as u32;
                    let qy = (i64::from(py) + rng.symmetric(2)).clamp(0, i64::from(k) - 1) as u32;
                    let q = qy * k + qx;
                    if q < count
                        && q != p
                        && let Some(s) = pin_name(q, &mut free, &mut rng)
                    {
                        pins.push(s);
                        break;
                    }
                }
            }
            if pins.len() >= 2 {
                nets.push(Net {
                    name: format!("N{}", nets.len() + 1),
                    class: None,
                    pins,
                    weight: 1.0,
                });
            }
        }
    }
    let side = (area / 0.4).sqrt();
    let side = (side * 2.0).ceil() / 2.0;
    Board {
        name: format!("random {count} parts"),
        outline: Shape::Rect {
            min: Point::new(0.0, 0.0),
            max: Point::new(side, side),
        },
        keepouts: Vec::new(),
        rules: Rules::default(),
        classes: Vec::new(),
        parts,
        nets,
        copper: Copper::default(),
        placement: None,
    }
}
