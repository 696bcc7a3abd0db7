//! The rule sets shipped with the tool (the `rules/` directory), embedded so
//! that `holdfast rules list` works wherever the binary is. A test checks this
//! list against the directory.

/// (file name, YAML text)
pub const SHIPPED: &[(&str, &str)] = &[
    (
        "eu-hvdc-2016-1447-table-7.yaml",
        include_str!("../../rules/eu-hvdc-2016-1447-table-7.yaml"),
    ),
    (
        "eu-rfg-2016-631-frequency.yaml",
        include_str!("../../rules/eu-rfg-2016-631-frequency.yaml"),
    ),
    (
        "eu-rfg-2016-631-ppm-type-b-c.yaml",
        include_str!("../../rules/eu-rfg-2016-631-ppm-type-b-c.yaml"),
    ),
    (
        "eu-rfg-2016-631-ppm-type-d.yaml",
        include_str!("../../rules/eu-rfg-2016-631-ppm-type-d.yaml"),
    ),
    (
        "eu-rfg-ppm-type-d-example.yaml",
        include_str!("../../rules/eu-rfg-ppm-type-d-example.yaml"),
    ),
    (
        "ieee-1547-2018-cat-i-hv.yaml",
        include_str!("../../rules/ieee-1547-2018-cat-i-hv.yaml"),
    ),
    (
        "ieee-1547-2018-cat-i-lv.yaml",
        include_str!("../../rules/ieee-1547-2018-cat-i-lv.yaml"),
    ),
    (
        "ieee-1547-2018-cat-ii-hv.yaml",
        include_str!("../../rules/ieee-1547-2018-cat-ii-hv.yaml"),
    ),
    (
        "ieee-1547-2018-cat-ii-lv.yaml",
        include_str!("../../rules/ieee-1547-2018-cat-ii-lv.yaml"),
    ),
    (
        "ieee-1547-2018-cat-iii-hv.yaml",
        include_str!("../../rules/ieee-1547-2018-cat-iii-hv.yaml"),
    ),
    (
        "ieee-1547-2018-cat-iii-lv.yaml",
        include_str!("../../rules/ieee-1547-2018-cat-iii-lv.yaml"),
    ),
    (
        "ieee-2800-2022-vrt.yaml",
        include_str!("../../rules/ieee-2800-2022-vrt.yaml"),
    ),
    (
        "nerc-prc-024-2-example.yaml",
        include_str!("../../rules/nerc-prc-024-2-example.yaml"),
    ),
    (
        "nerc-prc-024-3.yaml",
        include_str!("../../rules/nerc-prc-024-3.yaml"),
    ),
    (
        "nerc-prc-029-1-phase-jump.yaml",
        include_str!("../../rules/nerc-prc-029-1-phase-jump.yaml"),
    ),
    (
        "reactive-current-european-transmission.yaml",
        include_str!("../../rules/reactive-current-european-transmission.yaml"),
    ),
];

/// The shipped rule set named by its id or file name (with or without
/// `.yaml`): `(file name, text)`.
pub fn find(id: &str) -> Option<(&'static str, &'static str)> {
    #[derive(serde::Deserialize)]
    struct IdOnly {
        id: String,
    }
    SHIPPED.iter().copied().find(|(name, text)| {
        *name == id
            || name.strip_suffix(".yaml") == Some(id)
            || super::yaml::parse_tree::<IdOnly>(text).is_some_and(|r| r.id == id)
    })
}
