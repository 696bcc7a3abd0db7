//! docs/rules.md lists, for each check type, every key with whether it is
//! required and its default, exactly as the format (its JSON Schema) has
//! them. The tables
//! are written from the schema; regenerate with
//! `UPDATE_DOCS=1 cargo test docs`.

use crate::common::root;
use serde_json::Value;

/// What a key's values are, in words, from its schema.
fn kind(p: &Value, defs: &Value) -> String {
    if let Some(r) = p.get("$ref").and_then(|r| r.as_str()) {
        let d = &defs[r.trim_start_matches("#/$defs/")];
        // An enumeration: its `enum` list, or the `enum` and `const` arms of a `oneOf`.
        let arms: Vec<&Value> = match d.get("oneOf").and_then(|e| e.as_array()) {
            Some(one) => one.iter().collect(),
            None => vec![d],
        };
        let names: Vec<String> = arms
            .iter()
            .flat_map(|a| {
                let mut v: Vec<&Value> = a
                    .get("enum")
                    .and_then(|e| e.as_array())
                    .map(|e| e.iter().collect())
                    .unwrap_or_default();
                v.extend(a.get("const"));
                v
            })
            .filter_map(|v| v.as_str().map(|s| format!("`{s}`")))
            .collect();
        if !names.is_empty() {
            return names.join(", ");
        }
        return match r.trim_start_matches("#/$defs/") {
            "NumOrRef" => "number or `$parameter`".into(),
            "TableRow" => "row".into(),
            other => other.to_string(),
        };
    }
    if p.get("anyOf").is_some() {
        return "number or `$parameter`".into();
    }
    match p.get("type").and_then(|t| t.as_str()) {
        Some("array") => {
            let inner = p.get("items").map(|i| kind(i, defs)).unwrap_or_default();
            match (p.get("minItems"), p.get("maxItems")) {
                (Some(a), Some(b)) if a == b => format!("[{} × {inner}]", a),
                _ => format!("list of {inner}"),
            }
        }
        Some("number") => "number".into(),
        Some("integer") => "integer".into(),
        Some("string") => "text".into(),
        Some("boolean") => "true/false".into(),
        _ => "value".into(),
    }
}

/// The keys table of one object schema.
fn table(obj: &Value, defs: &Value) -> String {
    let required: Vec<&str> = obj["required"]
        .as_array()
        .map(|r| r.iter().filter_map(|x| x.as_str()).collect())
        .unwrap_or_default();
    let mut out =
        String::from("| key | required | default | values |\n| --- | --- | --- | --- |\n");
    let props = obj["properties"].as_object().unwrap();
    // Required keys first, in the schema's order, then the optional ones.
    let mut keys: Vec<&String> = props.keys().filter(|k| k.as_str() != "type").collect();
    keys.sort_by_key(|k| {
        (
            !required.contains(&k.as_str()),
            required.iter().position(|r| r == k),
        )
    });
    for k in keys {
        let p = &props[k];
        let req = if required.contains(&k.as_str()) {
            "yes"
        } else {
            "no"
        };
        let default = match p.get("default") {
            Some(Value::String(s)) => format!("`{s}`"),
            Some(v) => format!("`{v}`"),
            None if req == "yes" => "–".into(),
            None => "none".into(),
        };
        out += &format!("| `{k}` | {req} | {default} | {} |\n", kind(p, defs));
    }
    out
}

/// Every table the docs hold: (marker name, table).
fn tables() -> Vec<(String, String)> {
    let schema = serde_json::to_value(holdfast::rules::schema::rules_schema()).unwrap();
    let defs = &schema["$defs"];
    let mut out = Vec::new();
    for variant in defs["CheckSpec"]["oneOf"].as_array().unwrap() {
        let name = variant["properties"]["type"]["const"].as_str().unwrap();
        out.push((name.to_string(), table(variant, defs)));
    }
    out
}

#[test]
fn docs_list_every_key_with_required_and_default() {
    let path = root().join("docs/rules.md");
    let mut doc = std::fs::read_to_string(&path).unwrap();
    let original = doc.clone();
    for (name, want) in tables() {
        let open = format!("<!-- keys: {name} -->\n");
        let close = "<!-- /keys -->";
        let start = doc
            .find(&open)
            .unwrap_or_else(|| panic!("docs/rules.md has no `{}` marker", open.trim()))
            + open.len();
        let end = start + doc[start..].find(close).unwrap();
        doc.replace_range(start..end, &want);
    }
    if std::env::var_os("UPDATE_DOCS").is_some() && doc != original {
        std::fs::write(&path, &doc).unwrap();
        return;
    }
    assert!(
        doc == original,
        "docs/rules.md key tables are stale: run UPDATE_DOCS=1 cargo test docs"
    );
}
