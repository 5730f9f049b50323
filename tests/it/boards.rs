//! The test boards' builders, one set for every test file: parts, nets, outlines and
//! rules; small boards built by hand for the rules and routing tests (Chip and Custom
//! footprints only), and a synthetic board generator for timing the router.

use lehr_engine::model::board::{Copper, Keepout, Layers, Net, NetClass, Part, Rules, Track, Via};
use lehr_engine::model::footprint::PadSpec;
use lehr_engine::model::{Board, Design, FootprintSpec, Layer, PadShape, Point, Rect, Shape, Side};
use lehr_engine::place::rng::Rng;

pub fn p(x: f64, y: f64) -> Point {
    Point::new(x, y)
}

// ---------------------------------------------------------------------------------------
// Builders for invented boards of any outline, rules and net weights (the placement
// tests'); the shorthands below build on these.
// ---------------------------------------------------------------------------------------

/// A custom footprint: SMD pads (number, x, y) of 0.3 x 0.3 mm and, if given, a courtyard
/// of `w` x `h` centred on the origin.
pub fn custom_footprint(pads: &[(&str, f64, f64)], court: Option<(f64, f64)>) -> FootprintSpec {
    FootprintSpec::Custom {
        pads: pads
            .iter()
            .map(|&(n, x, y)| PadSpec {
                number: n.to_string(),
                centre: Point::new(x, y),
                width: 0.3,
                height: 0.3,
                shape: PadShape::Rectangle,
                hole: None,
            })
            .collect(),
        courtyard: court.map(|(w, h)| Rect::centered(Point::new(0.0, 0.0), w, h)),
    }
}

pub fn part(reference: &str, footprint: FootprintSpec, at: Option<(f64, f64)>) -> Part {
    Part {
        reference: reference.to_string(),
        footprint,
        value: String::new(),
        at: at.map(Point::from),
        rotation: 0.0,
        side: Side::Top,
        locked: false,
    }
}

pub fn weighted_net(name: &str, pins: &[&str], weight: f64) -> Net {
    Net {
        name: name.to_string(),
        class: None,
        pins: pins.iter().map(|s| s.to_string()).collect(),
        weight,
    }
}

pub fn rect_shape(x0: f64, y0: f64, x1: f64, y1: f64) -> Shape {
    Shape::Rect {
        min: Point::new(x0, y0),
        max: Point::new(x1, y1),
    }
}

pub fn outlined_board(
    name: &str,
    outline: Shape,
    rules: Rules,
    parts: Vec<Part>,
    nets: Vec<Net>,
) -> Board {
    Board {
        name: name.to_string(),
        outline,
        keepouts: Vec::new(),
        rules,
        classes: Vec::new(),
        parts,
        nets,
        copper: Copper::default(),
        placement: None,
        optimum: None,
    }
}

/// Rules with the given placement grid and clearance, defaults otherwise.
pub fn rules(grid: f64, clearance: f64) -> Rules {
    Rules {
        placement_grid: grid,
        clearance,
        ..Rules::default()
    }
}

/// Gives every unplaced part of `b` a random position on the `grid` within `bounds`.
pub fn scatter(b: &mut Board, bounds: Rect, grid: f64, rng: &mut Rng) {
    let nx = (bounds.width() / grid).floor() as u32 + 1;
    let ny = (bounds.height() / grid).floor() as u32 + 1;
    for p in &mut b.parts {
        if p.at.is_none() {
            p.at = Some(Point::new(
                bounds.min.x + f64::from(rng.below(nx)) * grid,
                bounds.min.y + f64::from(rng.below(ny)) * grid,
            ));
        }
    }
}

// ---------------------------------------------------------------------------------------
// Parts, nets and boards for the rules and routing tests.
// ---------------------------------------------------------------------------------------

/// A chip part ("0603", "0805", ...) at `at`, turned by `rotation` degrees.
pub fn chip(reference: &str, size: &str, at: Point, rotation: f64) -> Part {
    Part {
        rotation,
        ..part(
            reference,
            FootprintSpec::Chip(size.into()),
            Some((at.x, at.y)),
        )
    }
}

/// An SMD pad for a custom footprint.
pub fn smd(number: &str, at: Point, w: f64, h: f64, shape: PadShape) -> PadSpec {
    PadSpec {
        number: number.into(),
        centre: at,
        width: w,
        height: h,
        shape,
        hole: None,
    }
}

/// A plated through-hole pad.
pub fn tht(number: &str, at: Point, d: f64, drill: f64) -> PadSpec {
    PadSpec {
        number: number.into(),
        centre: at,
        width: d,
        height: d,
        shape: PadShape::Circle,
        hole: Some(drill),
    }
}

pub fn custom(reference: &str, pads: Vec<PadSpec>, at: Point) -> Part {
    let footprint = FootprintSpec::Custom {
        pads,
        courtyard: None,
    };
    part(reference, footprint, Some((at.x, at.y)))
}

/// An 8-pin dual-row SMD part like a SOIC-8 (pitch 1.27, rows 5.4 apart), pins
/// counter-clockwise from the lower left.
pub fn soic8(reference: &str, at: Point) -> Part {
    let mut pads = Vec::new();
    for i in 0..4 {
        let x = -1.905 + 1.27 * i as f64;
        pads.push(smd(
            &(i + 1).to_string(),
            p(x, -2.7),
            0.6,
            1.5,
            PadShape::Rounded,
        ));
    }
    for i in 0..4 {
        let x = 1.905 - 1.27 * i as f64;
        pads.push(smd(
            &(i + 5).to_string(),
            p(x, 2.7),
            0.6,
            1.5,
            PadShape::Rounded,
        ));
    }
    custom(reference, pads, at)
}

/// A single-row through-hole header with `n` pins at 2.54 mm pitch along x.
pub fn header(reference: &str, n: usize, at: Point) -> Part {
    let pads = (0..n)
        .map(|i| tht(&(i + 1).to_string(), p(2.54 * i as f64, 0.0), 1.7, 1.0))
        .collect();
    custom(reference, pads, at)
}

/// A net of weight 1.
pub fn net(name: &str, pins: &[&str]) -> Net {
    weighted_net(name, pins, 1.0)
}

/// A `w` x `h` mm rectangle from the origin with the default rules.
pub fn board(w: f64, h: f64, parts: Vec<Part>, nets: Vec<Net>) -> Board {
    let outline = rect_shape(0.0, 0.0, w, h);
    outlined_board("test", outline, Rules::default(), parts, nets)
}

pub fn track(net: &str, layer: Layer, width: f64, points: &[Point]) -> Track {
    Track {
        net: net.into(),
        layer,
        width,
        points: points.to_vec(),
    }
}

pub fn via(net: &str, at: Point) -> Via {
    Via {
        net: net.into(),
        at,
        drill: 0.3,
        diameter: 0.6,
    }
}

pub fn copper_keepout(name: &str, shape: Shape) -> Keepout {
    Keepout {
        name: name.into(),
        shape,
        layers: Layers::Both,
        parts: true,
        copper: true,
    }
}

pub fn power_class() -> NetClass {
    NetClass {
        name: "power".into(),
        track_width: 0.4,
        clearance: 0.25,
        current: Some(1.0),
        voltage: Some(12.0),
        temp_rise: None,
    }
}

pub fn design(board: Board) -> Design {
    match lehr_engine::model::resolve(board) {
        Ok(d) => d,
        Err(problems) => panic!(
            "test board does not check: {}",
            problems
                .iter()
                .map(|p| p.to_string())
                .collect::<Vec<_>>()
                .join("; ")
        ),
    }
}

/// The small hand-placed board the routing tests use: a through-hole connector, an
/// 8-pin SMD part, chip parts on both sides, a power class and a copper keep-out in the
/// middle of the board.
pub fn small_board() -> Board {
    let mut parts = vec![
        header("J1", 3, p(4.0, 3.0)),
        soic8("U1", p(20.0, 12.0)),
        chip("R1", "0805", p(10.0, 12.0), 90.0),
        chip("R2", "0805", p(12.0, 17.0), 0.0),
        chip("C1", "0603", p(27.0, 12.0), 90.0),
        chip("C2", "0603", p(26.0, 5.0), 0.0),
    ];
    let mut r3 = chip("R3", "0603", p(15.0, 6.0), 0.0);
    r3.side = Side::Bottom;
    parts.push(r3);
    let mut nets = vec![
        net("VCC", &["J1.1", "R1.1", "U1.8", "C1.1"]),
        net("GND", &["J1.2", "U1.4", "C1.2", "C2.2", "R3.2"]),
        net("SIG", &["J1.3", "R2.1", "U1.2"]),
        net("FB", &["R1.2", "R2.2", "U1.3"]),
        net("OUT", &["U1.6", "C2.1"]),
        net("EN", &["U1.1", "R3.1"]),
    ];
    nets[0].class = Some("power".into());
    nets[1].class = Some("power".into());
    let mut b = board(32.0, 22.0, parts, nets);
    b.classes.push(power_class());
    b.keepouts.push(copper_keepout(
        "mounting",
        Shape::Polygon(vec![
            p(14.0, 19.0),
            p(17.0, 19.0),
            p(17.0, 21.0),
            p(14.0, 21.0),
        ]),
    ));
    b
}

/// A small deterministic generator (64-bit LCG, Knuth's MMIX constants) for the
/// synthetic boards; the test data needs no statistical quality.
pub struct Lcg(u64);

impl Lcg {
    pub fn new(seed: u64) -> Self {
        Lcg(seed
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407))
    }

    pub fn next(&mut self) -> u64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        self.0 >> 33
    }

    pub fn below(&mut self, n: u64) -> u64 {
        self.next() % n
    }
}

/// A synthetic board of about `n` parts on a regular 9 mm grid (invented test data):
/// chip parts, 8-pin SMD parts and headers, with a ground net and a supply net over many
/// parts and short signal nets between neighbours.
pub fn synthetic(n: usize, seed: u64) -> Board {
    synthetic_at(n, seed, 9.0)
}

/// [`synthetic`] packed on a 7.5 mm grid (the 8-pin parts' courtyards are 7.4 mm tall),
/// with ground and supply in a 0.4 mm power class.
pub fn synthetic_dense(n: usize, seed: u64) -> Board {
    let mut b = synthetic_at(n, seed, 7.5);
    b.classes.push(power_class());
    for net in &mut b.nets[..2] {
        net.class = Some("power".into());
    }
    b
}

fn synthetic_at(n: usize, seed: u64, pitch: f64) -> Board {
    let mut rng = Lcg::new(seed);
    let cols = ((n as f64 * 1.5).sqrt()).ceil() as usize;
    let rows = n.div_ceil(cols);
    let mut parts = Vec::new();
    // Pins of each part, free for nets.
    let mut free: Vec<Vec<String>> = Vec::new();
    for k in 0..n {
        let (c, r) = (k % cols, k / cols);
        let at = p(6.0 + pitch * c as f64, 6.0 + pitch * r as f64);
        let (part, pins) = match rng.below(10) {
            0..=5 => {
                let size = if rng.below(2) == 0 { "0603" } else { "0805" };
                let rot = if rng.below(2) == 0 { 0.0 } else { 90.0 };
                (chip(&format!("R{k}"), size, at, rot), 2)
            }
            6..=8 => (soic8(&format!("U{k}"), at), 8),
            _ => (header(&format!("J{k}"), 3, p(at.x - 2.54, at.y)), 3),
        };
        free.push(
            (1..=pins)
                .map(|i| format!("{}.{i}", part.reference))
                .collect(),
        );
        parts.push(part);
    }
    let mut nets = Vec::new();
    let mut gnd = Vec::new();
    let mut vcc = Vec::new();
    for (k, pins) in free.iter_mut().enumerate() {
        if pins.len() > 2 && k % 2 == 0 {
            gnd.push(pins.remove(0));
            vcc.push(pins.pop().expect("pins"));
        }
    }
    nets.push(net(
        "GND",
        &gnd.iter().map(String::as_str).collect::<Vec<_>>(),
    ));
    nets.push(net(
        "VCC",
        &vcc.iter().map(String::as_str).collect::<Vec<_>>(),
    ));
    // Signal nets: a free pin joined to one or two free pins of nearby parts.
    for k in 0..n {
        while !free[k].is_empty() {
            let (c, r) = ((k % cols) as i64, (k / cols) as i64);
            let pick = rng.below(free[k].len() as u64) as usize;
            let mut pins = vec![free[k].remove(pick)];
            let want = 1 + rng.below(3).min(1) as usize + usize::from(rng.below(4) == 0);
            for _ in 0..8 {
                if pins.len() > want {
                    break;
                }
                let dc = rng.below(3) as i64 - 1;
                let dr = rng.below(3) as i64 - 1;
                let (nc, nr) = (c + dc, r + dr);
                if nc < 0 || nr < 0 || nc >= cols as i64 || (dc == 0 && dr == 0) {
                    continue;
                }
                let m = (nr * cols as i64 + nc) as usize;
                if m >= n || free[m].is_empty() {
                    continue;
                }
                pins.push(free[m].remove(0));
            }
            if pins.len() >= 2 {
                let name = format!("N{}", nets.len());
                nets.push(net(
                    &name,
                    &pins.iter().map(String::as_str).collect::<Vec<_>>(),
                ));
            }
        }
    }
    let w = 12.0 + pitch * (cols - 1) as f64 + 2.0;
    let h = 12.0 + pitch * (rows - 1) as f64 + 2.0;
    board(w, h, parts, nets)
}
