//! The only file that calls the core's physics: turns the edited project into the plan the panels render.

use ohmstack_core::{plan, Plan, Project};

/// Plans the project; an invalid project becomes its error message (shown in place of results).
pub fn analyse(project: &Project) -> Result<Plan, String> {
    project.validate().map_err(|e| e.to_string())?;
    plan(project).map_err(|e| e.to_string())
}
