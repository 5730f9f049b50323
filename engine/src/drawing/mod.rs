//! The board picture: what is drawn, in which colours, and the pens that draw it as SVG
//! or as pixels (PNG). The window adds only its own pen (egui) on top of this; `lehr
//! export` writes the pictures without a window.
//!
//! - [`colour`]: [`Colour`], our own sRGB colour, and the dark and light [`Palette`];
//! - [`scene`]: what the picture holds, in board millimetres: [`BoardFacts`] (taken from
//!   the design once: outline, keep-outs, pad nets), [`SceneGeometry`] (the placed parts
//!   and wiring still to do at one moment), the [`Marks`] a viewer singles out, and
//!   [`draw`], which hands every shape with its [`Item`] (what it shows) and colour to a
//!   [`Pen`];
//! - [`svg`]: the SVG pen, one group per item, and [`board_svg`];
//! - [`png`]: tiny-skia's pen, with part references set from glyph outlines, and
//!   [`board_png`];
//! - [`raster`]: a fast scanline pen of our own for the window's cached picture of large
//!   boards;
//! - [`caution`]: the safety caution of a board whose net classes carry hazardous
//!   voltages or high currents.

pub mod caution;
pub mod colour;
pub mod png;
pub mod raster;
pub mod scene;
pub mod svg;

pub use colour::{Colour, Palette};
pub use png::board_png;
pub use scene::{BoardFacts, Item, Marks, Pen, SceneGeometry, draw};
pub use svg::board_svg;
