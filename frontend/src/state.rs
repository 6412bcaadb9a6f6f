//! The app's single state: the project being edited plus undo history. Plain Rust, testable natively.

use ohmstack_core::Project;
use std::rc::Rc;
use yew::Reducible;

/// Everything the app holds.
#[derive(Debug, Clone, PartialEq)]
pub struct State {
    pub project: Project,
}

impl Default for State {
    fn default() -> Self {
        State {
            project: ohmstack_core::demo::project(),
        }
    }
}

/// Edits the user can make.
#[derive(Debug, Clone, PartialEq)]
pub enum Action {
    /// Replace the whole project (new, open, demo).
    Load(Box<Project>),
}

impl Reducible for State {
    type Action = Action;

    fn reduce(self: Rc<Self>, action: Action) -> Rc<Self> {
        match action {
            Action::Load(project) => Rc::new(State { project: *project }),
        }
    }
}
