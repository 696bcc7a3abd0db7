//! The JSON Schema of the rule-set format (the plan's is in
//! [`crate::plan`]), for editors (YAML language servers) and for validating
//! files with general-purpose tools. Generated from the serde types; every
//! number may also be written as `"$name"` of a rule-set parameter.

use serde_json::{json, Value};

const PARAM_REF: &str = r"^\$[A-Za-z_][A-Za-z0-9_]*$";

/// Lets every numeric schema also accept a `"$parameter"` reference.
pub(crate) fn allow_refs(v: &mut Value) {
    match v {
        Value::Object(m) => {
            let is_number = match m.get("type") {
                Some(Value::String(t)) => t == "number" || t == "integer",
                Some(Value::Array(a)) => a.iter().any(|t| t == "number"),
                _ => false,
            };
            if is_number {
                let mut orig = std::mem::take(m);
                // Default and description stay on the key, where editors
                // and readers look for them.
                for k in ["default", "description"] {
                    if let Some(x) = orig.remove(k) {
                        m.insert(k.into(), x);
                    }
                }
                m.insert(
                    "anyOf".into(),
                    json!([Value::Object(orig), { "type": "string", "pattern": PARAM_REF }]),
                );
                return;
            }
            for (_, x) in m.iter_mut() {
                allow_refs(x);
            }
        }
        Value::Array(a) => a.iter_mut().for_each(allow_refs),
        _ => {}
    }
}

/// The rule-set schema.
pub fn rules_schema() -> Value {
    let mut v =
        serde_json::to_value(schemars::schema_for!(super::spec::RuleSet)).unwrap_or(Value::Null);
    allow_refs(&mut v);
    if let Value::Object(m) = &mut v {
        m.insert("title".into(), json!("holdfast rule set"));
    }
    v
}
