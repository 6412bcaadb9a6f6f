//! Fuzz `Project::from_json` on arbitrary text; an accepted project must round-trip through JSON and plan without
//! panicking (every failure a typed error).
#![no_main]

use libfuzzer_sys::fuzz_target;
use ohmstack_core::{plan, Project};

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Ok(project) = Project::from_json(text) {
        let again = Project::from_json(&project.to_json()).expect("written JSON reads back");
        assert_eq!(again, project);
        let _ = plan(&project);
    }
});
