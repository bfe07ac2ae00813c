//! Decoding by a function chosen once per topic: the reader looks the type up when it first
//! meets a topic, then calls the type's own CDR decoder for every message of it.

pub use sillage_core::any::{DecodeFn, DECODERS};

/// The canonical type name and decoder of a topic type (`pkg/msg/Type` or `pkg/Type`).
pub fn decoder(type_name: &str) -> Option<(&'static str, DecodeFn)> {
    DECODERS.iter().find(|(n, _)| sillage_core::any::same_type(type_name, n)).copied()
}

#[cfg(test)]
mod tests {
    use super::*;
    use sillage_core::msg::Bool;
    use sillage_core::Msg;

    #[test]
    fn the_table_covers_the_vocabulary_and_agrees_with_msg_decode() {
        for (name, def) in sillage_core::any::DEFINITIONS {
            // Topic types are exactly those Msg knows; the rest are field types.
            assert_eq!(decoder(name).is_some(), Msg::is_known_type(name), "{name}");
            let _ = def;
        }
        let m: Msg = Bool { data: true }.into();
        let b = m.encode().expect("encodes");
        let (n, f) = decoder("std_msgs/Bool").expect("known");
        assert_eq!(n, "std_msgs/msg/Bool");
        assert_eq!(f(&b), Msg::decode(n, &b));
    }
}
