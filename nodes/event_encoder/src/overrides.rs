//! Parameter groups that channels can override field by field.
//!
//! [`overridable!`] declares a parameter struct (serde, `deny_unknown_fields`, `default`) and a
//! twin "overrides" struct whose fields are all `Option`s: a field that is set replaces the
//! node-wide value for one channel, a field left out keeps it. Both come from one field list,
//! so they cannot drift apart.

/// Declares `$name` with defaults, `$over` with optional fields, `$over::apply` and
/// `$name::FIELDS` (the serde keys, for routing flat per-channel keys to their group).
macro_rules! overridable {
    (
        $(#[$meta:meta])*
        pub struct $name:ident / $over:ident {
            $( $(#[$fmeta:meta])* pub $field:ident : $ty:ty = $default:expr ),* $(,)?
        }
    ) => {
        $(#[$meta])*
        #[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
        #[serde(deny_unknown_fields, default)]
        pub struct $name { $( $(#[$fmeta])* pub $field: $ty, )* }

        impl Default for $name {
            fn default() -> Self {
                $name { $( $field: $default, )* }
            }
        }

        impl $name {
            /// The parameter keys of this group, in declaration order.
            pub const FIELDS: &'static [&'static str] = &[ $( stringify!($field) ),* ];
        }

        #[doc = concat!("Per-channel overrides of [`", stringify!($name), "`]: a field that is set replaces the node-wide value.")]
        #[derive(Debug, Clone, Default, PartialEq, serde::Serialize, serde::Deserialize)]
        #[serde(deny_unknown_fields, default)]
        pub struct $over {
            $(
                #[doc = concat!("Overrides [`", stringify!($name), "::", stringify!($field), "`].")]
                #[serde(skip_serializing_if = "Option::is_none")]
                pub $field: Option<$ty>,
            )*
        }

        impl $over {
            /// `base` with every field that is set here replaced.
            pub fn apply(&self, base: &$name) -> $name {
                $name { $( $field: self.$field.clone().unwrap_or_else(|| base.$field.clone()), )* }
            }

            /// Whether no field is set.
            pub fn is_empty(&self) -> bool {
                true $( && self.$field.is_none() )*
            }
        }
    };
}
pub(crate) use overridable;
