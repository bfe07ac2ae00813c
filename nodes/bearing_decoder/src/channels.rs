//! Event channel index -> sensor.
//!
//! An `OdorEvent.channel` indexes the `ChemSample.channels` list of the sample that produced
//! it; the event message carries no names. So the decoder keeps the latest channel list of the
//! `chem` topic (or the `channel_names` parameter until one arrives) and maps each name to its
//! configured sensor position by name. Channels without a position are allowed in the list
//! (e.g. a temperature channel) but their events are refused with a warning.

use crate::geometry::SensorArray;

/// The current channel list and its sensor indices.
#[derive(Debug, Clone, PartialEq)]
pub struct ChannelMap {
    names: Vec<String>,
    sensors: Vec<Option<usize>>,
    changes: u64,
}

/// Where an event's channel index leads.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Lookup<'a> {
    /// The sensor index.
    Sensor(usize),
    /// A listed channel with no sensor position; its name.
    Unplaced(&'a str),
    /// Beyond the list; the list length.
    Unknown(usize),
}

impl ChannelMap {
    /// The map for `names` over `array`.
    pub fn new(names: &[String], array: &SensorArray) -> ChannelMap {
        ChannelMap { names: names.to_vec(), sensors: names.iter().map(|n| array.index_of(n)).collect(), changes: 0 }
    }

    /// Adopts a new list if it differs from the current one; returns whether it changed.
    pub fn update(&mut self, names: &[String], array: &SensorArray) -> bool {
        if self.names == names {
            return false;
        }
        self.names = names.to_vec();
        self.sensors = names.iter().map(|n| array.index_of(n)).collect();
        self.changes += 1;
        true
    }

    /// Resolves an event's channel index.
    pub fn lookup(&self, channel: u16) -> Lookup<'_> {
        match self.sensors.get(usize::from(channel)) {
            Some(Some(s)) => Lookup::Sensor(*s),
            Some(None) => Lookup::Unplaced(&self.names[usize::from(channel)]),
            None => Lookup::Unknown(self.names.len()),
        }
    }

    /// The sensor of channel `i` of the list, if placed.
    pub fn sensor(&self, i: usize) -> Option<usize> {
        self.sensors.get(i).copied().flatten()
    }

    /// The current names.
    pub fn names(&self) -> &[String] {
        &self.names
    }

    /// How many times the list changed.
    pub fn changes(&self) -> u64 {
        self.changes
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn s(v: &[&str]) -> Vec<String> {
        v.iter().map(|x| x.to_string()).collect()
    }

    #[test]
    fn names_map_to_sensors_and_lists_can_change() {
        let array = SensorArray::new(&s(&["left", "right"]), &[0.0, 0.0], &[0.1, -0.1]).expect("valid");
        let mut m = ChannelMap::new(&s(&["left", "right"]), &array);
        assert_eq!(m.lookup(1), Lookup::Sensor(1));
        assert_eq!(m.lookup(2), Lookup::Unknown(2));
        assert!(!m.update(&s(&["left", "right"]), &array));
        assert!(m.update(&s(&["temp", "right", "left"]), &array));
        assert_eq!(m.lookup(0), Lookup::Unplaced("temp"));
        assert_eq!(m.lookup(2), Lookup::Sensor(0));
        assert_eq!((m.sensor(1), m.changes()), (Some(1), 1));
    }
}
