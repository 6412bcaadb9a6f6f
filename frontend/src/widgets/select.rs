//! A labelled select menu that emits the chosen option's value.

use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct SelectProps {
    pub id: AttrValue,
    pub label: AttrValue,
    /// (value, label) pairs.
    pub options: Vec<(AttrValue, AttrValue)>,
    pub selected: AttrValue,
    pub onchange: Callback<String>,
    #[prop_or_default]
    pub hidden_label: bool,
    #[prop_or_default]
    pub disabled: bool,
    /// Extra classes on the wrapper (e.g. "unset" for a menu still on its placeholder, hidden in print).
    #[prop_or_default]
    pub class: Classes,
}

#[component]
pub fn Select(props: &SelectProps) -> Html {
    let onchange = {
        let cb = props.onchange.clone();
        Callback::from(move |e: Event| {
            let select: web_sys::HtmlSelectElement = e.target_unchecked_into();
            cb.emit(select.value());
        })
    };
    html! {
        <div class={classes!("field", props.class.clone())}>
            <label for={props.id.clone()} class={classes!(props.hidden_label.then_some("sr-only"))}>{ props.label.clone() }</label>
            <select id={props.id.clone()} data-testid={props.id.clone()} {onchange} disabled={props.disabled}>
                { for props.options.iter().map(|(value, label)| html! {
                    <option value={value.clone()} selected={*value == props.selected}>{ label.clone() }</option>
                }) }
            </select>
        </div>
    }
}
