//! Check types: one module each, all shaped alike (the
//! [`Check`](crate::rules::check::Check) trait).
//!
//! A check type owns everything about itself: its part of the rule-set
//! format (the spec struct, whose doc comments become the JSON Schema), the
//! value checks of `rules lint`, which disturbances it concerns, its unit,
//! the evaluation, what it hands to the figures (an overlay) and how
//! `rules plot` draws it. The list in [`crate::rules::registry`] is the one
//! place that knows them all (it also declares the modules here): adding a
//! check type is one new file here plus one line in that list (and its docs
//! and tests).

use super::check::Check;
use super::registry::check_types;
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

/// Declares each check type's module and makes the rule-set format's
/// tagged enum and the one dispatch from a spec to its [`Check`].
macro_rules! define_specs {
    ($( $(#[$doc:meta])* $variant:ident($module:ident :: $spec:ident) = $name:literal, )*) => {
        $( pub mod $module; )*

        /// One requirement.
        #[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
        #[serde(tag = "type", rename_all = "snake_case", deny_unknown_fields)]
        pub enum CheckSpec {
            $( $(#[$doc])* $variant($module::$spec), )*
        }

        impl CheckSpec {
            /// The one dispatch site.
            pub fn check(&self) -> &dyn Check {
                match self {
                    $( CheckSpec::$variant(c) => c, )*
                }
            }
        }
    };
}

check_types!(define_specs);

impl CheckSpec {
    pub fn id(&self) -> &str {
        self.check().id()
    }
    pub fn type_name(&self) -> &'static str {
        self.check().kind().name()
    }
}
