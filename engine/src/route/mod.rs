//! The router: connects each net's pins with tracks on two layers (top and bottom) and
//! vias, on the grid of `rules.routing_grid`.
//!
//! - [`search`]: A* (Hart, Nilsson and Raphael, 1968) over the two-layer grid, with the
//!   Manhattan heuristic (octile when 45-degree steps are on) and costs for length, vias
//!   and bends. [`Maze`] exposes it on a plain grid.
//! - `grid`: the fixed obstacles. Pads of other nets, copper keep-outs and the board edge
//!   block every grid step whose track would come closer than half the track width plus
//!   the clearance (per net class); the test is exact, not a rasterisation.
//!   Through-hole pads block both layers, SMD pads only their side. Pins are entered by
//!   stubs from the pad centre that may bend once onto the grid; vias may sit in a QFN's
//!   exposed pad for its own net (thermal vias).
//! - `negotiate`: multi-pin nets grow as a tree, each next pin joined to the nearest
//!   copper the net already has by a multi-source A*. Nets then negotiate for space
//!   (McMurchie and Ebeling, FPGA 1995; the cost form as recalled, from memory): a grid
//!   point costs (base + history) x present congestion; the nets that share space are ripped up and rerouted, with the present
//!   penalty growing each pass and the history of contested points remembered, until no
//!   space is shared or the pass limit is reached; when the count of nets in conflict stops
//!   falling, negotiation starts afresh with those nets first (the history kept) and the
//!   best attempt goes on. Nets still in conflict then give way one
//!   by one and are rerouted with contested space forbidden, so the result never has two
//!   nets too close; the nets that could not be finished are reported with the reason.
//!
//! **Invariant:** the copper the router returns passes [`crate::rules::drc::check`] with
//! no clearance, edge, keep-out or width violation, by construction: tracks of different
//! nets on the grid are kept apart by grid distance, fixed obstacles by exact geometry,
//! and each pin is entered by a stub from its pad centre checked like any other copper.
//! Existing copper on the board is ignored and replaced.
//!
//! **Invariant:** routing does no I/O and spawns no threads; the caller follows it through
//! the progress callback and stops it with the cancel flag.

mod grid;
mod negotiate;
pub mod search;

use std::sync::atomic::AtomicBool;

use serde::{Deserialize, Serialize};
use thiserror::Error;

use crate::model::board::Copper;
use crate::model::{Design, Point};
use crate::place::mst::{Metric, spanning_length};
pub use search::{Cell, Maze};

/// How the router searches and negotiates. Costs are in grid steps.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct RouteOptions {
    /// Allow 45-degree steps (octile heuristic).
    pub diagonal: bool,
    /// Cost of a via, in grid steps.
    pub via_cost: f64,
    /// Let vias overlap SMD pads (off by default: solder runs down an open via).
    pub vias_in_pads: bool,
    /// Cost of a change of direction, in grid steps.
    pub bend_cost: f64,
    /// Extra cost factor for a step against its layer's preferred direction (top prefers
    /// horizontal, bottom vertical), meant to keep the two layers from blocking each
    /// other. 0 by default: on the sample boards any preference cost more vias and longer
    /// tracks than it saved (docs/route-and-rules.md, "Routing quality").
    pub wrong_way_cost: f64,
    /// Most passes of rip-up and reroute.
    pub max_passes: u32,
    /// Present-congestion penalty per conflict in the first pass.
    pub present_factor: f64,
    /// The present penalty is multiplied by this after each pass.
    pub present_growth: f64,
    /// Added to a grid point's history cost each pass it is contested.
    pub history_factor: f64,
}

impl Default for RouteOptions {
    fn default() -> Self {
        RouteOptions {
            diagonal: false,
            via_cost: 8.0,
            vias_in_pads: false,
            bend_cost: 0.5,
            wrong_way_cost: 0.0,
            max_passes: 60,
            present_factor: 0.5,
            present_growth: 1.6,
            history_factor: 0.3,
        }
    }
}

/// Where the router is.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub enum RoutePhase {
    /// Building the grid and choosing where each pin is entered.
    Preparing,
    /// Routing nets and negotiating for space.
    Negotiating,
    /// Removing the last conflicts and rerouting those nets around the others.
    Settling,
}

/// A snapshot of the router's progress, sent through the progress callback after every
/// net routed and every pass.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct RouteProgress {
    /// What the router is doing.
    pub phase: RoutePhase,
    /// Pass of rip-up and reroute, from 1.
    pub pass: u32,
    /// The pass limit ([`RouteOptions::max_passes`]), for a progress bar.
    pub max_passes: u32,
    /// Nets routed so far in this pass.
    pub done_in_pass: usize,
    /// Nets this pass routes.
    pub nets_in_pass: usize,
    /// Nets still sharing space with another net, as of the end of the last pass.
    pub conflicting_nets: usize,
    /// Time since routing started.
    pub seconds: f64,
    /// The copper of the nets routed so far (shared space and all, while negotiating),
    /// attached to at most one report every [`LIVE_COPPER_INTERVAL_S`], so a viewer can
    /// draw the copper as it appears.
    pub copper: Option<crate::model::board::Copper>,
}

/// Shortest time between two progress reports that carry the copper so far, seconds.
pub const LIVE_COPPER_INTERVAL_S: f64 = 0.2;

/// A net the router could not finish, and why.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Unrouted {
    /// The net's name.
    pub net: String,
    /// A sentence for the user: which pin could not be reached and what is in the way.
    pub why: String,
}

/// The routed copper and how it went.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
pub struct RouteResult {
    /// Tracks and vias; partly routed nets keep the copper they got.
    pub copper: Copper,
    /// Nets with two or more pins, which need routing.
    pub nets: usize,
    /// Nets with every pin connected.
    pub routed: usize,
    /// Nets not finished (including those that could not start), with the reason.
    pub unrouted: Vec<Unrouted>,
    /// Total length of the tracks' centre lines.
    pub track_length_mm: f64,
    /// Number of vias.
    pub vias: usize,
    /// Sum over the nets that need routing of the length of a rectilinear (Manhattan)
    /// minimum spanning tree of their pad centres: what pin-to-pin wiring would need
    /// without detours, the yardstick for [`RouteResult::track_over_mst`].
    #[serde(default)]
    pub mst_mm: f64,
    /// Track length over [`RouteResult::mst_mm`] (0 when that is 0). Below 1 the tracks
    /// branch between pins (Steiner points); above 1 they detour.
    #[serde(default)]
    pub track_over_mst: f64,
    /// Vias over the nets that need routing (0 when there are none).
    #[serde(default)]
    pub vias_per_net: f64,
    /// Passes of rip-up and reroute run.
    pub passes: u32,
    /// Time the whole run took.
    pub seconds: f64,
    /// The cancel flag stopped the run early; the copper is still legal.
    pub cancelled: bool,
    /// 45-degree steps were allowed: asked for, or tried because axis steps alone left
    /// nets unrouted (see [`route`]).
    #[serde(default)]
    pub diagonal: bool,
}

impl RouteResult {
    /// The result with [`RouteResult::mst_mm`], [`RouteResult::track_over_mst`] and
    /// [`RouteResult::vias_per_net`] filled in from the track length, the vias and the pad
    /// centres of each net that needs routing.
    fn with_quality<N, P>(mut self, nets: N) -> RouteResult
    where
        N: Iterator<Item = P>,
        P: Iterator<Item = Point>,
    {
        let ratio = |a: f64, b: f64| if b > 0.0 { a / b } else { 0.0 };
        self.mst_mm = nets
            .map(|centres| spanning_length(&centres.collect::<Vec<_>>(), Metric::Manhattan))
            .sum();
        self.track_over_mst = ratio(self.track_length_mm, self.mst_mm);
        self.vias_per_net = ratio(self.vias as f64, self.nets as f64);
        self
    }
}

/// Why routing could not start.
#[derive(Clone, Debug, PartialEq, Error)]
pub enum RouteError {
    /// The board over the routing grid needs more points than [`MAX_GRID_POINTS`].
    #[error(
        "the routing grid would have {points} points per layer ({width} x {height}), more than \
         the {limit} allowed; use a coarser routing grid"
    )]
    GridTooLarge {
        /// Grid points across.
        width: usize,
        /// Grid points up.
        height: usize,
        /// `width · height`.
        points: usize,
        /// [`MAX_GRID_POINTS`].
        limit: usize,
    },
}

/// Most grid points per layer (memory grows by about 100 bytes per point).
pub const MAX_GRID_POINTS: usize = 6_000_000;

/// Routes every net of the design with two or more placed pins (see the module
/// documentation). `progress` is called often and should be cheap; set `cancel` from
/// another thread to stop early with the nets finished so far.
///
/// When axis steps alone leave nets unrouted, the whole board is routed again with
/// 45-degree steps as well (a diagonal slips between pads where two axis steps do not
/// fit), and that result is kept if it connects more nets; [`RouteResult::diagonal`]
/// says which was kept. Boards that route with axis steps are unchanged.
pub fn route(
    design: &Design,
    opts: &RouteOptions,
    cancel: &AtomicBool,
    progress: &mut dyn FnMut(&RouteProgress),
) -> Result<RouteResult, RouteError> {
    let start = std::time::Instant::now();
    let mut router = negotiate::Router::new(design, opts, start)?;
    let first = router.run(cancel, progress);
    if opts.diagonal || first.unrouted.is_empty() || first.cancelled {
        return Ok(first);
    }
    let diagonal = RouteOptions {
        diagonal: true,
        ..opts.clone()
    };
    let Ok(mut again) = negotiate::Router::new(design, &diagonal, start) else {
        return Ok(first);
    };
    let second = again.run(cancel, progress);
    Ok(if second.routed > first.routed && !second.cancelled {
        second
    } else {
        RouteResult {
            seconds: start.elapsed().as_secs_f64(),
            ..first
        }
    })
}
