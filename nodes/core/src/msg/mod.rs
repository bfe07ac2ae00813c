//! Rust mirrors of the ROS 2 messages the node graph uses. Field names are the ROS field names
//! and fields are in `.msg` order, so the serde layout is the CDR wire layout.

mod builtin;
mod diagnostic;
mod geometry;
mod nav;
mod sensor;
mod sillage;
mod std_msgs;

pub use builtin::*;
pub use diagnostic::*;
pub use geometry::*;
pub use nav::*;
pub use sensor::*;
pub use sillage::*;
pub use std_msgs::*;

/// Declares a message mirror: the struct, its constants and its [`crate::RosMessage`] impl.
macro_rules! ros_message {
    (
        $(#[$meta:meta])*
        $name:ident = $type_name:literal, $definition:expr;
        { $( $(#[$fmeta:meta])* $field:ident : $fty:ty ),* $(,)? }
        $( consts { $( $(#[$cmeta:meta])* $cname:ident : $cty:ty = $cval:expr ),* $(,)? } )?
    ) => {
        $(#[$meta])*
        #[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
        pub struct $name { $( $(#[$fmeta])* pub $field: $fty, )* }

        impl $name {
            $( $( $(#[$cmeta])* pub const $cname: $cty = $cval; )* )?
        }

        impl $crate::ros_type::RosMessage for $name {
            const TYPE_NAME: &'static str = $type_name;
            const DEFINITION: &'static str = $definition;
            const FIELDS: &'static [(&'static str, &'static str)] =
                &[ $( (stringify!($field), stringify!($fty)) ),* ];
            const CONSTANTS: &'static [(&'static str, &'static str, &'static str)] =
                &[ $( $( (stringify!($cname), stringify!($cty), stringify!($cval)) ),* )? ];
        }
    };
}
pub(crate) use ros_message;
