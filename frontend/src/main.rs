//! Entry point of the Ohmstack browser app: on the page, mounts the Yew app into the body; in the plan worker (the
//! same WASM started without a `window`), serves plan requests instead.

mod app;
mod bridge;
mod link;
mod panels;
mod persist;
mod plan_client;
mod plan_jobs;
mod proposer;
mod state;
mod widgets;
mod worker;

fn main() {
    if web_sys::window().is_some() {
        yew::Renderer::<app::App>::new().render();
    } else if worker::in_worker() {
        worker::serve();
    }
}
