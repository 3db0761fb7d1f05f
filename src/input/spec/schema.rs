//! The JSON Schema of the three input files, generated from the types that
//! parse them (`schemars`): field names, nesting, required fields, unknown
//! fields refused, enum spellings and the field docs come from the derives;
//! the quantities' text form (number and a unit of the field's dimension)
//! from [`crate::input::units::schema_pattern`]. Cross-field rules (a
//! minimum below a maximum, a topology's own fields) stay in
//! `input::design` and are not in the schema.
//!
//! Draft 7, the draft YAML editors' language servers read most widely.

use std::borrow::Cow;

use schemars::generate::SchemaSettings;
use schemars::{JsonSchema, Schema, SchemaGenerator, json_schema};

use super::quantity::{Dim, Either2, Q, Spread};
use super::{BoardFile, DesignFile, SwitchFile, SwitchRef, SwitchSpec};
use crate::input::units::{Dimension, schema_pattern};

/// `"back-EMF constant"` → `BackEmfConstant`-like schema names, stable
/// across releases (the editor's hover shows them).
fn type_name(dim: Dimension) -> String {
    format!("{dim:?}")
}

/// A quantity's schema: a string with a unit of its dimension.
fn quantity_schema(dim: Dimension) -> Schema {
    json_schema!({
        "type": "string",
        "pattern": schema_pattern(dim),
        "description": format!(
            "{} with its unit, such as {}",
            capitalised(&dim.with_article()),
            dim.example()
        ),
        "examples": [dim.example().trim_matches('"')],
    })
}

fn capitalised(text: &str) -> String {
    let mut c = text.chars();
    match c.next() {
        Some(first) => first.to_uppercase().chain(c).collect(),
        None => String::new(),
    }
}

impl<D: Dim> JsonSchema for Q<D> {
    fn schema_name() -> Cow<'static, str> {
        Cow::Owned(type_name(D::DIM))
    }

    fn json_schema(_: &mut SchemaGenerator) -> Schema {
        quantity_schema(D::DIM)
    }
}

impl<D: Dim> JsonSchema for Spread<D> {
    fn schema_name() -> Cow<'static, str> {
        Cow::Owned(format!("{}Spread", type_name(D::DIM)))
    }

    fn json_schema(g: &mut SchemaGenerator) -> Schema {
        let one = g.subschema_for::<Q<D>>();
        json_schema!({
            "description": format!(
                "{} as the datasheet's typical value ({}), or with its limits: {{ min: ..., typ: ..., max: ... }} (min and max optional)",
                capitalised(&D::DIM.with_article()),
                D::DIM.example()
            ),
            "oneOf": [
                one,
                {
                    "type": "object",
                    "properties": { "min": one, "typ": one, "max": one },
                    "required": ["typ"],
                    "additionalProperties": false,
                },
            ],
        })
    }
}

impl<A: Dim, B: Dim> JsonSchema for Either2<A, B> {
    fn schema_name() -> Cow<'static, str> {
        Cow::Owned(format!("{}Or{}", type_name(A::DIM), type_name(B::DIM)))
    }

    fn json_schema(g: &mut SchemaGenerator) -> Schema {
        let a = g.subschema_for::<Q<A>>();
        let b = g.subschema_for::<Q<B>>();
        json_schema!({
            "description": format!(
                "{} such as {} or {} such as {}",
                capitalised(&A::DIM.with_article()),
                A::DIM.example(),
                B::DIM.with_article(),
                B::DIM.example()
            ),
            "oneOf": [a, b],
        })
    }
}

impl JsonSchema for SwitchRef {
    fn schema_name() -> Cow<'static, str> {
        Cow::Borrowed("SwitchRef")
    }

    fn json_schema(g: &mut SchemaGenerator) -> Schema {
        let inline = g.subschema_for::<SwitchSpec>();
        json_schema!({
            "description": "A switch file path relative to this board file, `bundled:NAME`, or the switch's fields written inline",
            "oneOf": [
                { "type": "string", "examples": ["switches/tarn-40.yaml"] },
                inline,
            ],
        })
    }
}

/// The three schemas as pretty JSON with a final newline, each with its
/// file name: `switch.schema.json`, `board.schema.json`,
/// `design.schema.json`.
pub fn schemas() -> Vec<(&'static str, String)> {
    vec![
        (
            "switch.schema.json",
            render::<SwitchFile>("pwmplan switch file"),
        ),
        (
            "board.schema.json",
            render::<BoardFile>("pwmplan board file"),
        ),
        (
            "design.schema.json",
            render::<DesignFile>("pwmplan design file"),
        ),
    ]
}

fn render<T: JsonSchema>(title: &str) -> String {
    let mut schema = SchemaSettings::draft07()
        .into_generator()
        .into_root_schema_for::<T>();
    schema.insert("title".into(), title.into());
    // Serialising a `serde_json::Value` cannot fail.
    let mut text = serde_json::to_string_pretty(&schema).unwrap_or_default();
    text.push('\n');
    text
}
