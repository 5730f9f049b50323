//! Synthetic boards: boards with a known optimal wirelength (the grid of two-pin nets at
//! any aspect, multi-pin nets on a filled array) and random benchmark boards.

use crate::model::board::{Board, Copper, KnownOptimum, Net, Part, Rules, Shape};
use crate::model::footprint::{FootprintSpec, PadShape, PadSpec};
use crate::model::{Point, Rect, Side};

use super::rng::Rng;

/// A square part of side `p` with `pins` pads at its centre, numbered from "1", so a
/// net's HPWL is exactly the half-perimeter of its parts' centres.
fn centre_pin_footprint(p: f64, pins: u32) -> FootprintSpec {
    let s = (p / 4.0).clamp(0.01, 1.0);
    FootprintSpec::Custom {
        pads: (1..=pins.max(1))
            .map(|k| PadSpec {
                number: k.to_string(),
                centre: Point::new(0.0, 0.0),
                width: s,
                height: s,
                shape: PadShape::Rectangle,
                hole: None,
            })
            .collect(),
        courtyard: Some(Rect::centered(Point::new(0.0, 0.0), p, p)),
    }
}

/// Board columns and rows for `cols` x `rows` cells of parts with `slack` times their
/// area (at least the cells themselves): both sides grown by the square root, rounded
/// up to whole cells.
fn slack_cells(cols: u32, rows: u32, slack: f64) -> (u32, u32) {
    let k = slack.max(1.0).sqrt();
    let grow = |n: u32| ((f64::from(n) * k - 1e-9).ceil() as u32).max(n);
    (grow(cols), grow(rows))
}

/// A rectangular board of `cols` x `rows` cells of side `pitch`, the cell (0, 0) centred
/// on the origin, placement grid = pitch, no clearance.
fn cell_board(name: String, cols: u32, rows: u32, pitch: f64) -> Board {
    let h = pitch / 2.0;
    Board {
        name,
        outline: Shape::Rect {
            min: Point::new(-h, -h),
            max: Point::new(f64::from(cols) * pitch - h, f64::from(rows) * pitch - h),
        },
        keepouts: Vec::new(),
        rules: Rules {
            clearance: 0.0,
            placement_grid: pitch,
            ..Rules::default()
        },
        classes: Vec::new(),
        parts: Vec::new(),
        nets: Vec::new(),
        copper: Copper::default(),
        placement: None,
        optimum: None,
    }
}

/// `count` distinct cells of a `cols` x `rows` board, drawn at random (a partial
/// Fisher-Yates shuffle): a scattered start that stacks no two parts.
fn scattered_cells(cols: u32, rows: u32, count: u32, rng: &mut Rng) -> Vec<(u32, u32)> {
    let mut cells: Vec<u32> = (0..cols * rows).collect();
    for i in 0..count.min(cols * rows) as usize {
        let j = i + rng.below((cells.len() - i) as u32) as usize;
        cells.swap(i, j);
    }
    cells[..count as usize]
        .iter()
        .map(|&c| (c % cols, c / cols))
        .collect()
}

/// The grid instance: `n` x `n` identical square parts of side `pitch` on an
/// n·pitch x n·pitch board (placement grid = pitch, no clearance), with a two-pin net
/// between each pair of grid neighbours, parts scattered at random.
///
/// Two non-overlapping squares of side p have centres at least p apart along one axis, so
/// each net's HPWL is at least p, and the array itself reaches that bound for every net:
/// the optimum is exactly [`grid_optimum`].
pub fn grid_board(n: u32, pitch: f64, seed: u64) -> Board {
    grid_rect_board(n, n, pitch, 1.0, seed)
}

/// The grid instance with `rows` x `cols` parts ([`grid_board`] for any aspect), on a
/// board of `slack` times their area (1 fills it exactly), parts scattered at random.
/// The optimum, [`grid_rect_optimum`], is recorded in the board.
pub fn grid_rect_board(rows: u32, cols: u32, pitch: f64, slack: f64, seed: u64) -> Board {
    let mut rng = Rng::new(seed);
    let name = |r: u32, c: u32| format!("G{}", r * cols + c + 1);
    let (bc, br) = slack_cells(cols, rows, slack);
    let title = if slack > 1.0 {
        format!("grid {rows} x {cols}, pitch {pitch} mm, board {slack} times the parts' area")
    } else if rows == cols {
        format!("grid {rows} x {cols}, pitch {pitch} mm")
    } else {
        format!("grid {rows} x {cols} (rows x columns), pitch {pitch} mm")
    };
    let mut board = cell_board(title, bc, br, pitch);
    let cells = scattered_cells(bc, br, rows * cols, &mut rng);
    for r in 0..rows {
        for c in 0..cols {
            let (x, y) = cells[(r * cols + c) as usize];
            board.parts.push(Part {
                reference: name(r, c),
                footprint: centre_pin_footprint(pitch, 4),
                value: String::new(),
                at: Some(Point::new(f64::from(x) * pitch, f64::from(y) * pitch)),
                rotation: 0.0,
                side: Side::Top,
                locked: false,
            });
        }
    }
    for r in 0..rows {
        for c in 0..cols {
            if c + 1 < cols {
                board.nets.push(Net {
                    name: format!("H{}_{}", r + 1, c + 1),
                    class: None,
                    pins: vec![format!("{}.1", name(r, c)), format!("{}.3", name(r, c + 1))],
                    weight: 1.0,
                });
            }
            if r + 1 < rows {
                board.nets.push(Net {
                    name: format!("V{}_{}", r + 1, c + 1),
                    class: None,
                    pins: vec![format!("{}.2", name(r, c)), format!("{}.4", name(r + 1, c))],
                    weight: 1.0,
                });
            }
        }
    }
    board.optimum = Some(KnownOptimum {
        wirelength_mm: grid_rect_optimum(rows, cols, pitch),
        how: "grid of two-pin nets between neighbours: every net is at least one pitch \
              long, and the array reaches that"
            .into(),
    });
    board
}

/// Optimal wirelength of the grid instance: 2 n (n - 1) · pitch.
pub fn grid_optimum(n: u32, pitch: f64) -> f64 {
    grid_rect_optimum(n, n, pitch)
}

/// Optimal wirelength of the `rows` x `cols` grid instance: one pitch per net,
/// (rows (cols - 1) + cols (rows - 1)) · pitch.
pub fn grid_rect_optimum(rows: u32, cols: u32, pitch: f64) -> f64 {
    let (r, c) = (f64::from(rows), f64::from(cols));
    (r * (c - 1.0).max(0.0) + c * (r - 1.0).max(0.0)) * pitch
}

/// The settings of a board with multi-pin nets and a known optimum ([`peko_board`]).
#[derive(Clone, Debug, PartialEq)]
pub struct PekoSpec {
    pub rows: u32,
    pub cols: u32,
    /// Side of each (square) part and the placement grid, mm.
    pub pitch: f64,
    /// Nets per part.
    pub nets_per_part: f64,
    /// Relative frequency of nets of each pin count, `(pins, weight)`, pins 2 to 10.
    pub degrees: Vec<(u32, f64)>,
    /// Board area over the parts' area (1: the parts fill the board).
    pub slack: f64,
    pub seed: u64,
}

impl PekoSpec {
    /// The default mix of net sizes: mostly two- and three-pin nets, thinning out to
    /// ten pins. Our own choice, about the shape of the net-size statistics of real
    /// netlists (from memory), not a published table.
    pub const DEFAULT_DEGREES: [(u32, f64); 9] = [
        (2, 0.60),
        (3, 0.14),
        (4, 0.08),
        (5, 0.05),
        (6, 0.04),
        (7, 0.03),
        (8, 0.02),
        (9, 0.02),
        (10, 0.02),
    ];

    /// `rows` x `cols` parts, pitch 2.54 mm, one net per part, the default mix, filled.
    pub fn new(rows: u32, cols: u32, seed: u64) -> PekoSpec {
        PekoSpec {
            rows,
            cols,
            pitch: 2.54,
            nets_per_part: 1.0,
            degrees: PekoSpec::DEFAULT_DEGREES.to_vec(),
            slack: 1.0,
            seed,
        }
    }
}

/// The smallest boxes of grid points that hold `k` points: every `(w, h)` (columns,
/// rows) within `max_w` x `max_h` with `w·h >= k` and the least `(w - 1) + (h - 1)`.
fn smallest_boxes(k: u32, max_w: u32, max_h: u32) -> Vec<(u32, u32)> {
    let mut best = u32::MAX;
    let mut out = Vec::new();
    for w in 1..=max_w {
        for h in 1..=max_h {
            if w * h < k {
                continue;
            }
            let cost = w + h;
            if cost < best {
                best = cost;
                out.clear();
            }
            if cost == best {
                out.push((w, h));
            }
        }
    }
    out
}

/// A board with multi-pin nets and a known optimal wirelength, after the construction
/// of placement examples with known optima (Chang, Cong and Xie, ASP-DAC 2003): square
/// parts of one size fill a `rows` x `cols` array, and each net joins `k` parts that
/// lie in a smallest box of grid points holding `k` points, so each net sits at its own
/// lower bound in the array and the array is optimal.
///
/// The bound: parts are squares of side p on a p grid; two that do not overlap have
/// centres at least p apart along one axis, so the centres of `k` parts inside a box of
/// `w x h` grid steps number at most `w h`, and a net of `k` pins has HPWL at least
/// `p · min{(w - 1) + (h - 1) : w h >= k}`. Any `k` of the `w h` points of a smallest
/// box span it whole (else a smaller box would hold them), so the array reaches the bound
/// for every net, and the sum of the bounds is the optimum (recorded in the board).
///
/// The first `rows · cols` nets are anchored one on each part (in random order), so every
/// part is on a net; further nets anchor at random. Parts start scattered over the board,
/// which is `slack` times their area.
pub fn peko_board(spec: &PekoSpec) -> Board {
    let mut rng = Rng::new(spec.seed);
    let (rows, cols, pitch) = (spec.rows.max(1), spec.cols.max(1), spec.pitch);
    let n = rows * cols;
    let total: f64 = spec.degrees.iter().map(|d| d.1.max(0.0)).sum();
    let degrees: Vec<(u32, f64)> = if total > 0.0 {
        spec.degrees
            .iter()
            .map(|&(k, w)| (k.clamp(2, n.max(2)), w.max(0.0) / total))
            .collect()
    } else {
        vec![(2, 1.0)]
    };
    let net_count = ((f64::from(n) * spec.nets_per_part).round() as u32).max(1);
    // Pins of each part, as "reference.pad".
    let mut pins_of = vec![0u32; n as usize];
    let mut anchors: Vec<u32> = (0..n).collect();
    for i in (1..anchors.len()).rev() {
        let j = rng.below(i as u32 + 1) as usize;
        anchors.swap(i, j);
    }
    let reference = |cell: u32| format!("P{}", cell + 1);
    let mut nets = Vec::with_capacity(net_count as usize);
    let mut optimum_steps = 0u64;
    let mut block: Vec<u32> = Vec::new();
    for j in 0..net_count {
        // The net's size.
        let mut u = rng.unit();
        let mut k = degrees[degrees.len() - 1].0;
        for &(d, w) in &degrees {
            if u < w {
                k = d;
                break;
            }
            u -= w;
        }
        let k = k.min(n).max(2);
        let boxes = smallest_boxes(k, cols, rows);
        if boxes.is_empty() || n < 2 {
            continue;
        }
        let (w, h) = boxes[rng.below(boxes.len() as u32) as usize];
        let anchor = if (j as usize) < anchors.len() {
            anchors[j as usize]
        } else {
            rng.below(n)
        };
        let (ax, ay) = (anchor % cols, anchor / cols);
        // The box's lower-left corner: any that keeps the anchor inside and the box on
        // the array.
        let x_lo = ax.saturating_sub(w - 1);
        let x_hi = ax.min(cols - w);
        let y_lo = ay.saturating_sub(h - 1);
        let y_hi = ay.min(rows - h);
        let x0 = x_lo + rng.below(x_hi - x_lo + 1);
        let y0 = y_lo + rng.below(y_hi - y_lo + 1);
        // The anchor and k - 1 other points of the box.
        block.clear();
        for y in y0..y0 + h {
            for x in x0..x0 + w {
                let c = y * cols + x;
                if c != anchor {
                    block.push(c);
                }
            }
        }
        for i in 0..(k - 1) as usize {
            let r = i + rng.below((block.len() - i) as u32) as usize;
            block.swap(i, r);
        }
        let mut members: Vec<u32> = block[..(k - 1) as usize].to_vec();
        members.push(anchor);
        members.sort_unstable();
        let pins = members
            .iter()
            .map(|&c| {
                pins_of[c as usize] += 1;
                format!("{}.{}", reference(c), pins_of[c as usize])
            })
            .collect();
        optimum_steps += u64::from((w - 1) + (h - 1));
        nets.push(Net {
            name: format!("N{}", nets.len() + 1),
            class: None,
            pins,
            weight: 1.0,
        });
    }
    let (bc, br) = slack_cells(cols, rows, spec.slack);
    let title = format!(
        "multi-pin nets with a known optimum, {rows} x {cols} parts, {} nets{}",
        nets.len(),
        if spec.slack > 1.0 {
            format!(", board {} times the parts' area", spec.slack)
        } else {
            String::new()
        }
    );
    let mut board = cell_board(title, bc, br, pitch);
    let cells = scattered_cells(bc, br, n, &mut rng);
    for cell in 0..n {
        let (x, y) = cells[cell as usize];
        board.parts.push(Part {
            reference: reference(cell),
            footprint: centre_pin_footprint(pitch, pins_of[cell as usize]),
            value: String::new(),
            at: Some(Point::new(f64::from(x) * pitch, f64::from(y) * pitch)),
            rotation: 0.0,
            side: Side::Top,
            locked: false,
        });
    }
    board.nets = nets;
    board.optimum = Some(KnownOptimum {
        wirelength_mm: optimum_steps as f64 * pitch,
        how: "each net's parts fill a smallest box of grid points in the filled array \
              (after Chang, Cong and Xie, ASP-DAC 2003): the sum of per-net lower bounds"
            .into(),
    });
    board
}

/// The arrangement [`peko_board`] builds its nets on: part `P{i+1}` at cell
/// `(i % cols, i / cols)` times the pitch (an optimal placement; tests).
pub fn peko_reference_positions(spec: &PekoSpec) -> Vec<Point> {
    (0..spec.rows * spec.cols)
        .map(|c| {
            Point::new(
                f64::from(c % spec.cols) * spec.pitch,
                f64::from(c / spec.cols) * spec.pitch,
            )
        })
        .collect()
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
                centre: Point::new(
                    if k < 4 { -2.7 } else { 2.7 },
                    if k < 4 {
                        1.905 - 1.27 * k as f64
                    } else {
                        -1.905 + 1.27 * (k - 4) as f64
                    },
                ),
                width: 1.5,
                height: 0.6,
                shape: PadShape::Rounded,
                hole: None,
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
        optimum: None,
    }
}
