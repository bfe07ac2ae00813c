//! diagnostic_msgs.

use super::{ros_message, Header};

ros_message! {
    /// diagnostic_msgs/KeyValue.
    #[derive(Default)]
    KeyValue = "diagnostic_msgs/msg/KeyValue", "string key\nstring value\n";
    { key: String, value: String }
}

ros_message! {
    /// diagnostic_msgs/DiagnosticStatus; `name` is "node: part" by convention.
    #[derive(Default)]
    DiagnosticStatus = "diagnostic_msgs/msg/DiagnosticStatus",
        "byte OK=0\nbyte WARN=1\nbyte ERROR=2\nbyte STALE=3\nbyte level\nstring name\nstring message\nstring hardware_id\nKeyValue[] values\n";
    { level: u8, name: String, message: String, hardware_id: String, values: Vec<KeyValue> }
    consts { OK: u8 = 0, WARN: u8 = 1, ERROR: u8 = 2, STALE: u8 = 3 }
}

ros_message! {
    /// diagnostic_msgs/DiagnosticArray.
    #[derive(Default)]
    DiagnosticArray = "diagnostic_msgs/msg/DiagnosticArray", "std_msgs/Header header\nDiagnosticStatus[] status\n";
    { header: Header, status: Vec<DiagnosticStatus> }
}

impl DiagnosticStatus {
    /// A status taking its name, message and values by value (no copies of the strings).
    pub fn from_values(level: u8, name: String, message: String, values: Vec<(&str, String)>) -> Self {
        DiagnosticStatus {
            level,
            name,
            message,
            hardware_id: String::new(),
            values: values.into_iter().map(|(k, value)| KeyValue { key: k.to_string(), value }).collect(),
        }
    }

    /// A status with the given level, name and message, and `values` from pairs.
    pub fn with(level: u8, name: &str, message: &str, values: &[(&str, String)]) -> Self {
        DiagnosticStatus {
            level,
            name: name.to_string(),
            message: message.to_string(),
            hardware_id: String::new(),
            values: values
                .iter()
                .map(|(k, v)| KeyValue { key: (*k).to_string(), value: v.clone() })
                .collect(),
        }
    }
}
