//! A labelled text input bound to one [`Field`] of the state: shows the typed text while it is being edited (so
//! "0." is not reformatted under the cursor), marks itself invalid with the core's message, and dispatches edits.

use crate::state::{Action, Draft, Field};
use yew::prelude::*;

#[derive(Properties, PartialEq)]
pub struct TextFieldProps {
    pub field: Field,
    pub label: AttrValue,
    /// The stored value formatted for display (used when no draft exists).
    pub value: AttrValue,
    #[prop_or_default]
    pub draft: Option<Draft>,
    pub dispatch: Callback<Action>,
    /// Keep the label for screen readers only (the column header shows it).
    #[prop_or_default]
    pub hidden_label: bool,
    /// Width class of the input: "narrow", "medium" or "wide".
    #[prop_or(AttrValue::Static("medium"))]
    pub size: AttrValue,
    #[prop_or_default]
    pub placeholder: Option<AttrValue>,
}

#[component]
pub fn TextField(props: &TextFieldProps) -> Html {
    let id = props.field.id();
    let message_id = format!("{id}-error");
    let field = props.field;
    let oninput = {
        let dispatch = props.dispatch.clone();
        Callback::from(move |e: InputEvent| {
            let input: web_sys::HtmlInputElement = e.target_unchecked_into();
            dispatch.emit(Action::Edit(field, input.value()));
        })
    };
    let onblur = {
        let dispatch = props.dispatch.clone();
        Callback::from(move |_: FocusEvent| dispatch.emit(Action::Blur(field)))
    };
    // Enter ends the edit as leaving the field does: the value typed is meant, so its spread is due at once.
    let onkeydown = {
        let dispatch = props.dispatch.clone();
        Callback::from(move |e: KeyboardEvent| {
            if e.key() == "Enter" {
                dispatch.emit(Action::Blur(field));
            }
        })
    };
    let text = props
        .draft
        .as_ref()
        .map(|d| d.text.clone())
        .unwrap_or_else(|| props.value.to_string());
    let error = props.draft.as_ref().and_then(|d| d.error.clone());
    let invalid = error.is_some();
    html! {
        <div class={classes!("field", invalid.then_some("invalid"))}>
            <label for={id.clone()} class={classes!(props.hidden_label.then_some("sr-only"))}>{ props.label.clone() }</label>
            <input
                id={id.clone()}
                data-testid={id.clone()}
                type="text"
                class={classes!("text", props.size.to_string())}
                value={text}
                spellcheck="false"
                autocomplete="off"
                placeholder={props.placeholder.clone()}
                aria-invalid={if invalid { "true" } else { "false" }}
                aria-describedby={invalid.then(|| message_id.clone())}
                {oninput}
                {onblur}
                {onkeydown}
            />
            if let Some(message) = error {
                <span id={message_id.clone()} data-testid={message_id} class="field-error" aria-live="polite">{ message }</span>
            }
        </div>
    }
}
