//! Matching a sample's channels to the tracked channels by name.
//!
//! The mapping from array index to channel is rebuilt only when a sample's `channels` array
//! differs from the previous one, so boards may send any number of channels in any order and
//! change them at any time. A channel that leaves the set keeps its state (it comes back where
//! it left off) until room is needed for a new one: then the channel absent longest goes first.
//! An empty name or a repeated name makes that array entry unusable (its values are rejected).

use crate::channel::Channel;
use crate::params::Params;
use sillage_core::Nanos;
use std::collections::{HashMap, HashSet};

/// What an index of the current channels array stands for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Slot {
    /// The tracked channel with this index.
    Channel(usize),
    /// The name is empty.
    Empty,
    /// The name repeats the one at this earlier index.
    Duplicate(usize),
    /// No room for another channel (`max_channels`).
    Full,
}

/// A channel known by name.
#[derive(Debug, Clone, PartialEq)]
pub struct Tracked {
    /// The channel name.
    pub name: String,
    /// Its state.
    pub channel: Channel,
    /// Index in the current channels array (None: not in the current set).
    pub index: Option<usize>,
    /// Last sample time that carried this channel [ns].
    pub last_seen: Option<Nanos>,
}

/// The tracked channels and the current index mapping.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Layout {
    names: Vec<String>,
    slots: Vec<Slot>,
    tracked: Vec<Tracked>,
}

impl Layout {
    /// Whether `names` is the current channels array.
    #[inline]
    pub fn matches(&self, names: &[String]) -> bool {
        self.names == names
    }

    /// The slots of the current array.
    pub fn slots(&self) -> &[Slot] {
        &self.slots
    }

    /// The current channels array.
    pub fn names(&self) -> &[String] {
        &self.names
    }

    /// Every tracked channel.
    pub fn tracked(&self) -> &[Tracked] {
        &self.tracked
    }

    /// Every tracked channel, mutably.
    pub fn tracked_mut(&mut self) -> &mut [Tracked] {
        &mut self.tracked
    }

    /// Takes `names` as the new channels array; returns a description of the change (None for
    /// the very first array).
    pub fn rebuild(&mut self, names: &[String], p: &Params) -> Option<String> {
        let first = self.names.is_empty() && self.tracked.is_empty();
        let before: HashSet<&str> = self.tracked.iter().filter(|t| t.index.is_some()).map(|t| t.name.as_str()).collect();
        let wanted: HashSet<&str> = names.iter().filter(|n| !n.is_empty()).map(String::as_str).collect();
        let known: HashSet<&str> = self.tracked.iter().map(|t| t.name.as_str()).collect();
        let new_count = wanted.iter().filter(|n| !known.contains(*n)).count();
        let room = (p.max_channels as usize).saturating_sub(self.tracked.len());
        // Make room: forget channels absent from the new set, the longest absent first.
        let mut absent: Vec<(Option<Nanos>, String)> =
            self.tracked.iter().filter(|t| !wanted.contains(t.name.as_str())).map(|t| (t.last_seen, t.name.clone())).collect();
        absent.sort();
        let evict: HashSet<String> = absent.into_iter().take(new_count.saturating_sub(room)).map(|(_, n)| n).collect();
        let (added, removed) = {
            let mut added: Vec<&str> = names.iter().map(String::as_str).filter(|n| !n.is_empty() && !before.contains(n)).collect();
            added.dedup();
            let mut removed: Vec<&str> = before.iter().copied().filter(|n| !wanted.contains(n)).collect();
            removed.sort();
            (added.join(", "), removed.join(", "))
        };
        self.tracked.retain(|t| !evict.contains(&t.name));
        for t in &mut self.tracked {
            t.index = None;
        }
        let mut by_name: HashMap<String, usize> = self.tracked.iter().enumerate().map(|(i, t)| (t.name.clone(), i)).collect();
        let mut first_index: HashMap<&str, usize> = HashMap::new();
        let mut slots = Vec::with_capacity(names.len());
        for (i, name) in names.iter().enumerate() {
            if name.is_empty() {
                slots.push(Slot::Empty);
                continue;
            }
            if let Some(&j) = first_index.get(name.as_str()) {
                slots.push(Slot::Duplicate(j));
                continue;
            }
            first_index.insert(name, i);
            let k = match by_name.get(name) {
                Some(&k) => k,
                None if self.tracked.len() < p.max_channels as usize => {
                    let (c, e) = p.for_channel(name);
                    let channel = Channel::new(&c, &e, p.stale_timeout);
                    self.tracked.push(Tracked { name: name.clone(), channel, index: None, last_seen: None });
                    by_name.insert(name.clone(), self.tracked.len() - 1);
                    self.tracked.len() - 1
                }
                None => {
                    slots.push(Slot::Full);
                    continue;
                }
            };
            self.tracked[k].index = Some(i);
            slots.push(Slot::Channel(k));
        }
        self.slots = slots;
        self.names = names.to_vec();
        if first {
            return None;
        }
        Some(match (added.is_empty(), removed.is_empty()) {
            (true, true) => format!("channel order changed to [{}]", names.join(", ")),
            (false, true) => format!("channels added: {added}"),
            (true, false) => format!("channels removed: {removed}"),
            (false, false) => format!("channels added: {added}; removed: {removed}"),
        })
    }

    /// Forgets every channel's signal history.
    pub fn reset_all(&mut self) {
        for t in &mut self.tracked {
            t.channel.reset();
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(v: &[&str]) -> Vec<String> {
        v.iter().map(|s| s.to_string()).collect()
    }

    #[test]
    fn names_map_to_channels_whatever_the_order() {
        let p = Params::default();
        let mut l = Layout::default();
        assert_eq!(l.rebuild(&names(&["left", "right"]), &p), None);
        assert_eq!(l.slots(), &[Slot::Channel(0), Slot::Channel(1)]);
        assert_eq!(l.rebuild(&names(&["right", "left"]), &p).as_deref(), Some("channel order changed to [right, left]"));
        assert_eq!(l.slots(), &[Slot::Channel(1), Slot::Channel(0)], "state follows the name");
        assert_eq!(l.rebuild(&names(&["right", "", "mid", "right"]), &p).as_deref(), Some("channels added: mid; removed: left"));
        assert_eq!(l.slots(), &[Slot::Channel(1), Slot::Empty, Slot::Channel(2), Slot::Duplicate(0)]);
        assert_eq!(l.tracked()[0].index, None, "left is kept, out of the set");
        assert!(l.matches(&names(&["right", "", "mid", "right"])));
    }

    #[test]
    fn room_is_made_by_forgetting_absent_channels() {
        let p = Params { max_channels: 2, ..Params::default() };
        let mut l = Layout::default();
        l.rebuild(&names(&["a", "b"]), &p);
        l.tracked_mut()[0].last_seen = Some(5);
        l.tracked_mut()[1].last_seen = Some(9);
        l.rebuild(&names(&["c"]), &p);
        let kept: Vec<&str> = l.tracked().iter().map(|t| t.name.as_str()).collect();
        assert_eq!(kept, vec!["b", "c"], "a was absent longest");
        l.rebuild(&names(&["b", "c", "d"]), &p);
        assert_eq!(l.slots(), &[Slot::Channel(0), Slot::Channel(1), Slot::Full]);
    }
}
