"""Case values of the CDR fixtures, in the JSON form written to cdr_cases.json.

Keys are ROS field names in .msg order; builtin_interfaces/Time is {"sec", "nanosec"};
sequences and fixed arrays are lists; floats are finite Python floats, and float32 fields
hold exactly representable float32 values (see f32). make_cdr_fixtures.py validates every
value against the message definitions before serializing it.
"""

from __future__ import annotations

import math

import numpy as np

# Member that IDL adds to a message without fields (std_msgs/msg/Empty).
PLACEHOLDER = "structure_needs_at_least_one_member"


def ros_time(sec: int, nanosec: int) -> dict:
    return {"sec": sec, "nanosec": nanosec}


def header(sec: int, nanosec: int, frame_id: str) -> dict:
    return {"stamp": ros_time(sec, nanosec), "frame_id": frame_id}


def xyz(x: float, y: float, z: float) -> dict:
    return {"x": x, "y": y, "z": z}


def quat(x: float, y: float, z: float, w: float) -> dict:
    return {"x": x, "y": y, "z": z, "w": w}


def pose(position: dict, orientation: dict) -> dict:
    return {"position": position, "orientation": orientation}


def twist(linear: dict, angular: dict) -> dict:
    return {"linear": linear, "angular": angular}


def covariance(diagonal: list[float], off: float) -> list[float]:
    """Symmetric 6x6 row-major covariance with alternating-sign off-diagonal terms."""
    return [diagonal[i] if i == j else off * (i + j) * (-1.0) ** (i + j)
            for i in range(6) for j in range(6)]


def f32(x: float) -> float:
    """The exact double value of the float32 nearest to x (what a float32 field carries)."""
    return float(np.float32(x))


H0 = header(0, 0, "")
ZERO3 = xyz(0.0, 0.0, 0.0)
MIXED3 = xyz(0.1, -2.5e-7, 1e300)
QUAT0 = quat(0.0, 0.0, 0.0, 0.0)
YAW_QUARTER = quat(0.0, 0.0, math.sqrt(0.5), math.sqrt(0.5))
POSE0 = pose(xyz(0.0, 0.0, 0.0), QUAT0)
POSE1 = pose(xyz(-3.25, 12.5, 0.0), quat(-0.0, 0.0, -0.3826834323650898, 0.9238795325112867))
TWIST0 = twist(ZERO3, ZERO3)
TWIST1 = twist(xyz(0.35, -0.0, 0.0), xyz(0.0, 0.0, -1.25))
COV0 = [0.0] * 36
COV1 = covariance([0.01, 0.04, 1e-9, 1e6, 1e6, 0.0025], 1e-3)
ODD = "odom"          # 5 bytes with its NUL: 7 pad bytes before a following float64
UTF8 = "capteur_é"    # 10 bytes of UTF-8 + NUL = 11: non-ASCII and odd
WIND = "vent 🌬 amont"  # a 4-byte UTF-8 character


def metadata(load: dict, resolution: float, width: int, height: int, origin: dict) -> dict:
    return {"map_load_time": load, "resolution": resolution, "width": width, "height": height,
            "origin": origin}


META0 = metadata(ros_time(0, 0), 0.0, 0, 0, POSE0)
# A 3 x 2 grid of 0.25 m cells whose corner is at (-3.25, 12.5), turned by -45 deg.
META1 = metadata(ros_time(1767225600, 1), 0.25, 3, 2, POSE1)


def kv(key: str, value: str) -> dict:
    return {"key": key, "value": value}


def status(level: int, name: str, message: str, hardware_id: str, values: list) -> dict:
    return {"level": level, "name": name, "message": message,
            "hardware_id": hardware_id, "values": values}


def event(sec: int, nanosec: int, channel: int, polarity: int, level: float) -> dict:
    return {"stamp": ros_time(sec, nanosec), "channel": channel, "polarity": polarity,
            "level": level}


CASES: dict[str, list[tuple[str, dict]]] = {
    "builtin_interfaces/msg/Time": [
        ("zero", ros_time(0, 0)),
        ("typical", ros_time(1767225600, 123456789)),
        ("negative_sec", ros_time(-1, 999999999)),
        ("limits", ros_time(-(2**31), 2**32 - 1)),
    ],
    "std_msgs/msg/Header": [
        ("empty_frame", H0),
        ("odd_frame", header(1767225600, 500000000, ODD)),
        ("utf8_frame", header(42, 7, UTF8)),
    ],
    "std_msgs/msg/Bool": [
        ("false", {"data": False}),
        ("true", {"data": True}),
    ],
    # Empty has a single possible value: its placeholder member is always 0.
    "std_msgs/msg/Empty": [
        ("empty", {PLACEHOLDER: 0}),
    ],
    "geometry_msgs/msg/Vector3": [
        ("zero", ZERO3),
        ("mixed", MIXED3),
        ("extremes", xyz(-0.0, 5e-324, -1.7976931348623157e308)),
    ],
    "geometry_msgs/msg/Vector3Stamped": [
        ("empty_frame", {"header": H0, "vector": ZERO3}),
        ("wind_odd_frame", {"header": header(1767225600, 20000000, ODD),
                            "vector": xyz(-1.5, 0.25, 0.0)}),
        ("utf8_frame", {"header": header(3, 4, WIND), "vector": MIXED3}),
    ],
    "geometry_msgs/msg/Point": [
        ("zero", ZERO3),
        ("mixed", xyz(-1.5, 2.25e-3, 12345.678)),
    ],
    "geometry_msgs/msg/PointStamped": [
        ("empty_frame", {"header": H0, "point": ZERO3}),
        ("source_in_map", {"header": header(1767225661, 999999999, "map"),
                           "point": xyz(4.2, -0.75, 0.0)}),
        ("utf8_frame", {"header": header(1, 0, UTF8), "point": xyz(-1.5, 2.25e-3, 1e-300)}),
    ],
    "geometry_msgs/msg/Quaternion": [
        ("zero", QUAT0),
        ("yaw_quarter_turn", YAW_QUARTER),
    ],
    "geometry_msgs/msg/Pose": [
        ("zero", POSE0),
        ("mixed", POSE1),
    ],
    "geometry_msgs/msg/PoseWithCovariance": [
        ("zero", {"pose": POSE0, "covariance": COV0}),
        ("mixed", {"pose": POSE1, "covariance": COV1}),
    ],
    "geometry_msgs/msg/PoseWithCovarianceStamped": [
        ("empty_frame", {"header": H0, "pose": {"pose": POSE0, "covariance": COV0}}),
        ("posterior_odd_frame", {"header": header(1767225600, 250000000, ODD),
                                 "pose": {"pose": POSE1, "covariance": COV1}}),
        ("utf8_frame", {"header": header(7, 3, UTF8),
                        "pose": {"pose": pose(MIXED3, YAW_QUARTER), "covariance": COV1[::-1]}}),
    ],
    "geometry_msgs/msg/Twist": [
        ("zero", TWIST0),
        ("mixed", TWIST1),
    ],
    "geometry_msgs/msg/TwistStamped": [
        ("empty_frame", {"header": H0, "twist": TWIST0}),
        ("worked_example_base_link", {"header": header(1767225600, 250000000, "base_link"),
                                      "twist": twist(xyz(0.5, 0.0, 0.0), xyz(0.0, 0.0, 0.1))}),
        ("utf8_frame", {"header": header(-5, 1, UTF8), "twist": TWIST1}),
    ],
    "geometry_msgs/msg/TwistWithCovariance": [
        ("zero", {"twist": TWIST0, "covariance": COV0}),
        ("mixed", {"twist": TWIST1, "covariance": COV1}),
    ],
    "nav_msgs/msg/Odometry": [
        ("empty_frames", {"header": H0, "child_frame_id": "",
                          "pose": {"pose": POSE0, "covariance": COV0},
                          "twist": {"twist": TWIST0, "covariance": COV0}}),
        ("odom_to_base_link", {"header": header(1767225600, 33000000, ODD),
                               "child_frame_id": "base_link",
                               "pose": {"pose": POSE1, "covariance": COV1},
                               "twist": {"twist": TWIST1, "covariance": COV1[::-1]}}),
    ],
    "nav_msgs/msg/MapMetaData": [
        ("zero", META0),
        ("mixed", META1),
    ],
    "nav_msgs/msg/OccupancyGrid": [
        ("empty_grid", {"header": H0, "info": META0, "data": []}),
        # 3 x 2 cells, row-major from (0, 0): an odd count of int8 values ends the buffer.
        ("three_by_two_odd_frame", {"header": header(1767225600, 500000000, ODD), "info": META1,
                                    "data": [0, 100, -1, 127, -128, 7]}),
        ("one_cell_utf8_frame", {"header": header(2, 1, UTF8),
                                 "info": metadata(ros_time(-1, 5), f32(0.05), 1, 1, POSE0),
                                 "data": [42]}),
    ],
    "sensor_msgs/msg/LaserScan": [
        ("empty_ranges", {"header": H0, "angle_min": 0.0, "angle_max": 0.0,
                          "angle_increment": 0.0, "time_increment": 0.0, "scan_time": 0.0,
                          "range_min": 0.0, "range_max": 0.0, "ranges": [], "intensities": []}),
        ("three_beams", {"header": header(1767225600, 100000000, "laser"),
                         "angle_min": -0.5, "angle_max": 0.5, "angle_increment": 0.5,
                         "time_increment": f32(1e-4), "scan_time": f32(0.1),
                         "range_min": f32(0.05), "range_max": 12.0,
                         "ranges": [1.25, f32(3.3), 0.0625],
                         "intensities": [100.0, -0.0, f32(47.9)]}),
        ("no_intensities", {"header": header(9, 9, UTF8), "angle_min": f32(-math.pi),
                            "angle_max": f32(math.pi), "angle_increment": f32(math.pi / 2),
                            "time_increment": 0.0, "scan_time": 0.25, "range_min": f32(0.1),
                            "range_max": 30.0, "ranges": [2.0, 2.5, 3.0, 3.5, 4.0],
                            "intensities": []}),
    ],
    "diagnostic_msgs/msg/KeyValue": [
        ("empty", kv("", "")),
        ("utf8", kv("température", "21,5 °C")),
    ],
    "diagnostic_msgs/msg/DiagnosticStatus": [
        ("empty", status(0, "", "", "", [])),
        ("warn_with_values", status(1, "arbiter: guard", "odom stale", "",
                                    [kv("odom_age_s", "0.75"), kv("", ""),
                                     kv("raison", WIND)])),
    ],
    "diagnostic_msgs/msg/DiagnosticArray": [
        ("empty", {"header": H0, "status": []}),
        ("two_statuses", {"header": header(1767225600, 1, ""),
                          "status": [status(0, "event_encoder: input", "ok", "board-7", []),
                                     status(3, "plume_estimator: chem", "no samples", "",
                                            [kv("last_seen", "never")])]}),
    ],
    "rosgraph_msgs/msg/Clock": [
        ("zero", {"clock": ros_time(0, 0)}),
        ("typical", {"clock": ros_time(1767225600, 999999999)}),
    ],
    "sillage_msgs/msg/ChemSample": [
        ("empty", {"header": H0, "channels": [], "values": [], "quantity": 0}),
        ("two_channels", {"header": header(1767225600, 10000000, "nose_board"),
                          "channels": ["left", "right"], "values": [12345.5, 0.1],
                          "quantity": 1}),
        ("utf8_channels", {"header": header(1767225600, 20000000, ODD),
                           "channels": ["gauche", "droite", "centre_é"],
                           "values": [-2.5e-7, 1e300, 3.0], "quantity": 3}),
    ],
    "sillage_msgs/msg/OdorEvent": [
        ("zero", event(0, 0, 0, 0, 0.0)),
        ("falling", event(1767225600, 123456789, 1, -1, -0.125)),
        ("rising_last_channel", event(1767225601, 5, 65535, 1, 0.1)),
    ],
    "sillage_msgs/msg/OdorEventArray": [
        ("empty", {"header": H0, "events": []}),
        ("three_events", {"header": header(1767225600, 130000000, ODD),
                          "events": [event(1767225600, 120000001, 0, 1, 0.3),
                                     event(1767225600, 125000000, 1, 1, 0.3),
                                     event(1767225600, 129999999, 0, -1, 0.2)]}),
    ],
    "sillage_msgs/msg/OdorBearing": [
        ("zero", {"header": H0, "bearing": 0.0, "lag": 0.0, "confidence": 0.0, "cue": 0}),
        ("fused", {"header": header(1767225600, 5000000, "base_link"),
                   "bearing": -0.5235987755982988, "lag": -0.2, "confidence": 0.875,
                   "cue": 2}),
    ],
    "sillage_msgs/msg/PlumeFeatures": [
        ("zero", {"header": H0, "window": 0.0, "bouts": 0, "bout_rate": 0.0,
                  "bout_amplitude": 0.0, "intermittency": 0.0, "distance": 0.0,
                  "distance_sigma": 0.0, "edge_index": 0.0}),
        ("typical", {"header": header(1767225600, 0, UTF8), "window": 20.0,
                     "bouts": 4294967295, "bout_rate": 0.35, "bout_amplitude": 2.5e-7,
                     "intermittency": 0.42, "distance": 1.45, "distance_sigma": 0.08,
                     "edge_index": -1e-300}),
    ],
    "sillage_msgs/msg/SearchState": [
        ("empty_reason", {"header": H0, "mode": 0, "reason": "", "heading_target": 0.0,
                          "contact_age": 0.0}),
        ("casting_utf8_reason", {"header": header(1767225600, 750000000, ODD), "mode": 2,
                                 "reason": "contact perdu depuis 2,5 s – demi-tour",
                                 "heading_target": 1.5707963267948966, "contact_age": 2.5}),
        ("halted_odd_reason", {"header": header(1767225700, 0, "odom"), "mode": 4,
                               "reason": "e_stop", "heading_target": -3.141592653589793,
                               "contact_age": 1e300}),
    ],
}
