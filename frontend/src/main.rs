//! Entry point of the Ohmstack browser app: mounts the Yew app into the page body.

mod app;
mod bridge;
mod link;
mod panels;
mod persist;
mod state;
mod widgets;

fn main() {
    yew::Renderer::<app::App>::new().render();
}
