//! Undo and redo of the user's own edits (moving, turning, locking a part). The
//! annealer's moves are not edits: undoing a drag puts the part back where it was picked
//! up, wherever the annealer has taken the other parts since.

use lehr_engine::model::{Point, Quarter};

/// Where a part stood and whether it was locked.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PartState {
    pub at: Point,
    pub quarter: Quarter,
    pub locked: bool,
}

/// One edit of one part: its state before and after.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Edit {
    pub part: u32,
    pub before: PartState,
    pub after: PartState,
}

/// The undo and redo stacks. Recording a new edit clears the redo stack.
#[derive(Debug, Default)]
pub struct UndoStack {
    done: Vec<Edit>,
    undone: Vec<Edit>,
}

/// At most this many edits are remembered.
const DEPTH: usize = 500;

impl UndoStack {
    pub fn record(&mut self, e: Edit) {
        if e.before == e.after {
            return;
        }
        self.done.push(e);
        if self.done.len() > DEPTH {
            self.done.remove(0);
        }
        self.undone.clear();
    }

    /// The edit to reverse: apply its `before` state.
    pub fn undo(&mut self) -> Option<Edit> {
        let e = self.done.pop()?;
        self.undone.push(e);
        Some(e)
    }

    /// The edit to repeat: apply its `after` state.
    pub fn redo(&mut self) -> Option<Edit> {
        let e = self.undone.pop()?;
        self.done.push(e);
        Some(e)
    }

    pub fn can_undo(&self) -> bool {
        !self.done.is_empty()
    }

    pub fn can_redo(&self) -> bool {
        !self.undone.is_empty()
    }

    pub fn clear(&mut self) {
        self.done.clear();
        self.undone.clear();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn state(x: f64, locked: bool) -> PartState {
        PartState {
            at: Point::new(x, 0.0),
            quarter: Quarter::R0,
            locked,
        }
    }

    fn edit(part: u32, from: f64, to: f64) -> Edit {
        Edit {
            part,
            before: state(from, false),
            after: state(to, false),
        }
    }

    #[test]
    fn undo_then_redo_walks_back_and_forth() {
        let mut u = UndoStack::default();
        u.record(edit(1, 0.0, 5.0));
        u.record(edit(2, 1.0, 7.0));
        assert_eq!(u.undo().unwrap().part, 2);
        assert_eq!(u.undo().unwrap().before.at.x, 0.0);
        assert!(u.undo().is_none());
        assert_eq!(u.redo().unwrap().after.at.x, 5.0);
        assert!(u.can_redo());
        // A new edit forgets what was undone.
        u.record(edit(3, 2.0, 3.0));
        assert!(!u.can_redo());
        assert_eq!(u.undo().unwrap().part, 3);
        assert_eq!(u.undo().unwrap().part, 1);
    }

    #[test]
    fn no_op_edits_are_not_recorded_and_depth_is_bounded() {
        let mut u = UndoStack::default();
        u.record(edit(1, 4.0, 4.0));
        assert!(!u.can_undo());
        for i in 0..(DEPTH + 50) {
            u.record(edit(0, i as f64, i as f64 + 1.0));
        }
        let mut n = 0;
        while u.undo().is_some() {
            n += 1;
        }
        assert_eq!(n, DEPTH);
    }
}
