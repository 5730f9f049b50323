//! The board model: geometry, footprints, the board file's types and their validation.

pub mod board;
pub mod footprint;
pub mod geom;
pub mod names;
mod packages;
pub mod text;
pub mod validate;
mod warnings;

pub use board::{
    Board, Design, KnownOptimum, Layer, NetId, PartId, PinRef, Shape, Side, rect_to_board, to_board,
};
pub use footprint::{Footprint, FootprintSpec, Pad, PadKind, PadShape};
pub use geom::{Point, Quarter, Rect};
pub use validate::{Problem, problems_line, resolve};
pub use warnings::warnings;
