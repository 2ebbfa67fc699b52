//! Undo and redo of the session's document: sites and launches, the body panel's settings
//! (mass, spin, gravity method), flight settings and seed.
//!
//! One step is one committed edit: the document is compared with the last recorded one at the
//! end of each frame, but not while a text field has the focus or a pointer button is held (a
//! drag, a half-typed number), so typing a number or dragging a slider is one step. Opening
//! another shape model or scenario starts a new history.

use spinfall_dynamics::scenario::Scenario;

use crate::session::BodyParams;

/// Most steps kept.
pub const MAX_STEPS: usize = 200;

/// The document as undo sees it: the scenario with the body panel's values written in, and
/// those values (which also say which mass figure was typed).
#[derive(Debug, Clone, PartialEq)]
pub struct DocState {
    /// The scenario.
    pub scenario: Scenario,
    /// The body panel.
    pub params: BodyParams,
}

/// Undo and redo stacks.
#[derive(Debug, Default)]
pub struct History {
    undo: Vec<DocState>,
    redo: Vec<DocState>,
    last: Option<DocState>,
}

impl History {
    /// Forget every step; `now` is the document from here on.
    pub fn reset(&mut self, now: DocState) {
        self.undo.clear();
        self.redo.clear();
        self.last = Some(now);
    }

    /// Record `now` as a step if it differs from the last recorded document.
    pub fn record(&mut self, now: &DocState) {
        match &self.last {
            Some(last) if last == now => {}
            Some(_) => {
                if let Some(prev) = self.last.replace(now.clone()) {
                    self.undo.push(prev);
                    if self.undo.len() > MAX_STEPS {
                        self.undo.remove(0);
                    }
                }
                self.redo.clear();
            }
            None => self.last = Some(now.clone()),
        }
    }

    /// The document before the last step (`now` is what is shown, recorded first).
    pub fn undo(&mut self, now: &DocState) -> Option<DocState> {
        self.record(now);
        let prev = self.undo.pop()?;
        if let Some(cur) = self.last.replace(prev.clone()) {
            self.redo.push(cur);
        }
        Some(prev)
    }

    /// The document the last undo went back from.
    pub fn redo(&mut self, now: &DocState) -> Option<DocState> {
        self.record(now);
        let next = self.redo.pop()?;
        if let Some(cur) = self.last.replace(next.clone()) {
            self.undo.push(cur);
        }
        Some(next)
    }

    /// Whether there is a step to undo.
    pub fn can_undo(&self) -> bool {
        !self.undo.is_empty()
    }

    /// Whether there is a step to redo.
    pub fn can_redo(&self) -> bool {
        !self.redo.is_empty()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::session::new_scenario;

    fn doc(speed: f64) -> DocState {
        let params = BodyParams::default();
        let mut scenario = new_scenario(
            "builtin:quillon".into(),
            spinfall_gravity::LengthUnit::Kilometre,
            true,
            &params,
        );
        scenario.seed = Some(speed as u64);
        DocState { scenario, params }
    }

    #[test]
    fn undo_and_redo_walk_the_recorded_steps() {
        let mut h = History::default();
        h.reset(doc(1.0));
        h.record(&doc(1.0));
        assert!(!h.can_undo(), "an unchanged document is no step");
        h.record(&doc(2.0));
        h.record(&doc(3.0));
        assert_eq!(h.undo(&doc(3.0)), Some(doc(2.0)));
        assert_eq!(h.undo(&doc(2.0)), Some(doc(1.0)));
        assert_eq!(h.undo(&doc(1.0)), None);
        assert_eq!(h.redo(&doc(1.0)), Some(doc(2.0)));
        // A new edit drops what could be redone.
        h.record(&doc(7.0));
        assert!(!h.can_redo());
        assert_eq!(h.undo(&doc(7.0)), Some(doc(2.0)));
        // An edit not recorded yet is recorded by the undo, so redo brings it back.
        let mut h = History::default();
        h.reset(doc(1.0));
        assert_eq!(h.undo(&doc(5.0)), Some(doc(1.0)));
        assert_eq!(h.redo(&doc(1.0)), Some(doc(5.0)));
    }
}
