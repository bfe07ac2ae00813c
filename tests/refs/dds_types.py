"""IDL mirrors of the ROS 2 messages sillage exchanges, for Cyclone DDS (PyPI `cyclonedds`).

Written from the .msg definitions (msgs/msg/*.msg and the ROS 2 standard packages), not from
sillage's Rust code: the DDS type names follow the ROS 2 convention `pkg::msg::dds_::Type_`,
every struct is `final` (XCDR1 as ROS 2 uses it), fields are in .msg order.

Also the deliberately wrong types the wire test sends: `std_msgs/String` (a wrong type for a
topic) and structs that reuse a sillage type name with a shorter layout (malformed CDR).
"""

from dataclasses import dataclass, field

import cyclonedds.idl.annotations as annotate
from cyclonedds.idl import IdlStruct
from cyclonedds.idl.types import array, float64, int32, sequence, uint8, uint32, uint64


def dds(pkg: str, name: str) -> str:
    """The DDS type name of ROS type pkg/msg/name."""
    return f"{pkg}::msg::dds_::{name}_"


@dataclass
@annotate.final
class Time(IdlStruct, typename=dds("builtin_interfaces", "Time")):
    sec: int32 = 0
    nanosec: uint32 = 0

    @staticmethod
    def of(t_ns: int) -> "Time":
        return Time(t_ns // 1_000_000_000, t_ns % 1_000_000_000)

    def ns(self) -> int:
        return self.sec * 1_000_000_000 + self.nanosec


@dataclass
@annotate.final
class Header(IdlStruct, typename=dds("std_msgs", "Header")):
    stamp: Time = field(default_factory=Time)
    frame_id: str = ""


@dataclass
@annotate.final
class Clock(IdlStruct, typename=dds("rosgraph_msgs", "Clock")):
    clock: Time = field(default_factory=Time)


@dataclass
@annotate.final
class Bool(IdlStruct, typename=dds("std_msgs", "Bool")):
    data: bool = False


@dataclass
@annotate.final
class Empty(IdlStruct, typename=dds("std_msgs", "Empty")):
    structure_needs_at_least_one_member: uint8 = 0


@dataclass
@annotate.final
class String(IdlStruct, typename=dds("std_msgs", "String")):
    data: str = ""


@dataclass
@annotate.final
class ChemSample(IdlStruct, typename=dds("sillage_msgs", "ChemSample")):
    header: Header = field(default_factory=Header)
    channels: sequence[str] = field(default_factory=list)
    values: sequence[float64] = field(default_factory=list)
    quantity: uint8 = 0


@dataclass
@annotate.final
class SearchState(IdlStruct, typename=dds("sillage_msgs", "SearchState")):
    header: Header = field(default_factory=Header)
    mode: uint8 = 0
    reason: str = ""
    heading_target: float64 = 0.0
    contact_age: float64 = 0.0


@dataclass
@annotate.final
class Vector3(IdlStruct, typename=dds("geometry_msgs", "Vector3")):
    x: float64 = 0.0
    y: float64 = 0.0
    z: float64 = 0.0


@dataclass
@annotate.final
class Vector3Stamped(IdlStruct, typename=dds("geometry_msgs", "Vector3Stamped")):
    header: Header = field(default_factory=Header)
    vector: Vector3 = field(default_factory=Vector3)


@dataclass
@annotate.final
class Point(IdlStruct, typename=dds("geometry_msgs", "Point")):
    x: float64 = 0.0
    y: float64 = 0.0
    z: float64 = 0.0


@dataclass
@annotate.final
class Quaternion(IdlStruct, typename=dds("geometry_msgs", "Quaternion")):
    x: float64 = 0.0
    y: float64 = 0.0
    z: float64 = 0.0
    w: float64 = 1.0


@dataclass
@annotate.final
class Pose(IdlStruct, typename=dds("geometry_msgs", "Pose")):
    position: Point = field(default_factory=Point)
    orientation: Quaternion = field(default_factory=Quaternion)


@dataclass
@annotate.final
class PoseWithCovariance(IdlStruct, typename=dds("geometry_msgs", "PoseWithCovariance")):
    pose: Pose = field(default_factory=Pose)
    covariance: array[float64, 36] = field(default_factory=lambda: [0.0] * 36)


@dataclass
@annotate.final
class Twist(IdlStruct, typename=dds("geometry_msgs", "Twist")):
    linear: Vector3 = field(default_factory=Vector3)
    angular: Vector3 = field(default_factory=Vector3)


@dataclass
@annotate.final
class TwistStamped(IdlStruct, typename=dds("geometry_msgs", "TwistStamped")):
    header: Header = field(default_factory=Header)
    twist: Twist = field(default_factory=Twist)


@dataclass
@annotate.final
class TwistWithCovariance(IdlStruct, typename=dds("geometry_msgs", "TwistWithCovariance")):
    twist: Twist = field(default_factory=Twist)
    covariance: array[float64, 36] = field(default_factory=lambda: [0.0] * 36)


@dataclass
@annotate.final
class Odometry(IdlStruct, typename=dds("nav_msgs", "Odometry")):
    header: Header = field(default_factory=Header)
    child_frame_id: str = ""
    pose: PoseWithCovariance = field(default_factory=PoseWithCovariance)
    twist: TwistWithCovariance = field(default_factory=TwistWithCovariance)


@dataclass
@annotate.final
class KeyValue(IdlStruct, typename=dds("diagnostic_msgs", "KeyValue")):
    key: str = ""
    value: str = ""


@dataclass
@annotate.final
class DiagnosticStatus(IdlStruct, typename=dds("diagnostic_msgs", "DiagnosticStatus")):
    level: uint8 = 0
    name: str = ""
    message: str = ""
    hardware_id: str = ""
    values: sequence[KeyValue] = field(default_factory=list)


@dataclass
@annotate.final
class DiagnosticArray(IdlStruct, typename=dds("diagnostic_msgs", "DiagnosticArray")):
    header: Header = field(default_factory=Header)
    status: sequence[DiagnosticStatus] = field(default_factory=list)


# --- Deliberately malformed layouts under sillage type names --------------------------------


@dataclass
@annotate.final
class ChemSampleCut(IdlStruct, typename=dds("sillage_msgs", "ChemSample")):
    """A ChemSample cut after the header: `channels` claims `count` strings that never come."""

    header: Header = field(default_factory=Header)
    count: uint32 = 1000


@dataclass
@annotate.final
class BoolTooLong(IdlStruct, typename=dds("std_msgs", "Bool")):
    """A Bool with 8 bytes where 1 is due: too many trailing bytes for the codec."""

    data: uint64 = 0x0101010101010101
