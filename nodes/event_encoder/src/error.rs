//! Typed reasons for rejecting input (each is counted, warned about at a limited rate and
//! shown in the diagnostics; none stops the node).

use crate::conditioning::SampleFault;
use thiserror::Error;

/// Why a sample, or one value of it, was not used.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum InputError {
    /// `values` and `channels` differ in length: the whole sample is rejected.
    #[error("sample at t = {stamp} ns: {channels} channel names but {values} values; sample rejected")]
    LengthMismatch { stamp: i64, channels: usize, values: usize },
    /// More channels than `max_channels`: the whole sample is rejected.
    #[error("sample at t = {stamp} ns: {count} channels, more than max_channels = {max}; sample rejected")]
    TooManyChannels { stamp: i64, count: usize, max: u32 },
    /// The quantity code is none of ChemSample's constants: the whole sample is rejected.
    #[error("sample at t = {stamp} ns: unknown quantity {quantity} (known: 0 RESISTANCE .. 4 RELATIVE); sample rejected")]
    UnknownQuantity { stamp: i64, quantity: u8 },
    /// Not newer than the last sample (and not far enough back to count as a reset): dropped.
    #[error("sample at t = {stamp} ns is not newer than the last one at {last} ns; dropped")]
    NotNewer { stamp: i64, last: i64 },
    /// One channel's value is bad: that value is rejected.
    #[error("channel '{name}' (index {index}) at t = {stamp} ns: {fault}; value rejected")]
    Value { stamp: i64, index: usize, name: String, fault: SampleFault },
    /// A channel name is empty: its values are rejected.
    #[error("channels[{index}] has an empty name; its values are rejected")]
    EmptyName { index: usize },
    /// A channel name repeats an earlier one: the repeat's values are rejected.
    #[error("channels[{index}] = '{name}' repeats channels[{first}]; the repeat's values are rejected")]
    DuplicateName { index: usize, first: usize, name: String },
    /// No room for another channel: its values are rejected.
    #[error("channels[{index}] = '{name}': already tracking max_channels = {max} channels; its values are rejected")]
    NoRoom { index: usize, name: String, max: u32 },
}
