//! The stack picture beside the layer table: an SVG cross-section, layers drawn top to bottom at heights that follow
//! their thickness (thin layers held to a readable minimum), copper, core, prepreg and mask told apart by colour and
//! edge, each labelled with its name and thickness. Each layer is a keyboard-operable button: clicking it (or Enter /
//! Space on it) asks the table to focus that layer's row for editing.

use crate::bridge;
use ohmstack_core::{Layer, Project};
use std::rc::Rc;
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct StackPictureProps {
    pub project: Rc<Project>,
    /// The layer last picked (drawn outlined).
    pub selected: Option<usize>,
    /// A layer was picked.
    pub on_pick: Callback<usize>,
}

/// Drawing width and the smallest height a layer is drawn at, px (two lines of 9 px labels fit in it).
const WIDTH: f64 = 180.0;
const MIN_H: f64 = 14.0;

/// Heights in px for `thicknesses`, proportional except where held to `MIN_H`, summing to about `total`.
fn heights(thicknesses: &[f64], total: f64) -> Vec<f64> {
    let sum: f64 = thicknesses.iter().sum();
    if sum <= 0.0 {
        return vec![MIN_H; thicknesses.len()];
    }
    // Px per metre: the clamped layers take their minimum and the rest share what is left; a few passes settle
    // which layers are clamped (each pass can only clamp more).
    let mut scale = total / sum;
    for _ in 0..8 {
        let (clamped, free): (Vec<f64>, Vec<f64>) =
            thicknesses.iter().partition(|&&t| t * scale < MIN_H);
        let free_sum: f64 = free.iter().sum();
        let room = total - clamped.len() as f64 * MIN_H;
        if free_sum <= 0.0 || room <= 0.0 {
            break;
        }
        scale = room / free_sum;
    }
    thicknesses.iter().map(|t| (t * scale).max(MIN_H)).collect()
}

#[component]
pub fn StackPicture(props: &StackPictureProps) -> Html {
    let layers = &props.project.stackup.layers;
    let unit = props.project.units;
    let thick: Vec<f64> = layers.iter().map(Layer::thickness_m).collect();
    let total = (layers.len() as f64 * 17.0).max(300.0);
    let hs = heights(&thick, total);
    let mut y = 4.0;
    let items = layers.iter().enumerate().map(|(i, layer)| {
        let h = hs[i];
        let top = y;
        y += h;
        let (class, kind) = match layer {
            Layer::Copper(c) => ("pic-copper", format!("copper, {:?}", c.role).to_lowercase()),
            Layer::Core(_) => ("pic-core", "core".to_string()),
            Layer::Prepreg(_) => ("pic-prepreg", "prepreg".to_string()),
            Layer::SolderMask(_) => ("pic-mask", "solder mask".to_string()),
        };
        let name = layer.name().to_string();
        let t = bridge::length_label(layer.thickness_m(), unit);
        let pick = {
            let cb = props.on_pick.clone();
            Callback::from(move |_: MouseEvent| cb.emit(i))
        };
        let key = {
            let cb = props.on_pick.clone();
            Callback::from(move |e: KeyboardEvent| {
                if e.key() == "Enter" || e.key() == " " {
                    e.prevent_default();
                    cb.emit(i);
                }
            })
        };
        let picked = props.selected == Some(i);
        let text_y = top + h / 2.0 + 3.5;
        html! {
            <g class={classes!("pic-layer", class, picked.then_some("picked"))} role="button" tabindex="0"
                aria-label={format!("{name} {t}, {kind}: edit in the table")} data-testid={format!("pic-layer-{i}")}
                onclick={pick} onkeydown={key}>
                <rect x="1" y={format!("{top:.2}")} width={format!("{}", WIDTH - 2.0)} height={format!("{:.2}", h - 1.0)} rx="1.5" />
                // One text, so the visible words read "name thickness" in order with a space (the accessible name
                // starts with them); the thickness is a chunk set at the right edge.
                <text x="7" y={format!("{text_y:.2}")}>{ name }{ " " }<tspan x={format!("{}", WIDTH - 7.0)} text-anchor="end">{ t }</tspan></text>
            </g>
        }
    });
    let items: Html = items.collect();
    let height = y + 4.0;
    html! {
        <figure class="stack-picture no-print" data-testid="stack-picture">
            <svg viewBox={format!("0 0 {WIDTH} {height:.2}")} width={WIDTH.to_string()} height={format!("{height:.0}")}
                role="group" aria-label="Stack cross-section, top to bottom: pick a layer to edit it">
                { items }
            </svg>
            <figcaption>{ "Not to scale where thin: every layer is at least a label high. Pick a layer to edit its row." }</figcaption>
        </figure>
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thin_layers_are_held_to_the_minimum_and_the_rest_stay_proportional() {
        let t = [20e-6, 35e-6, 1000e-6, 35e-6, 500e-6];
        let h = heights(&t, 300.0);
        assert!(h.iter().all(|&x| x >= MIN_H));
        assert_eq!((h[0], h[1], h[3]), (MIN_H, MIN_H, MIN_H));
        // The unclamped layers keep their ratio (2:1) and fill what the clamped ones leave.
        assert!((h[2] / h[4] - 2.0).abs() < 1e-9);
        assert!((h.iter().sum::<f64>() - 300.0).abs() < 1e-6);
    }
}
