//! From one decoded message to the few numbers a drive log needs: side speeds, a pose, or a
//! terrain name, with the message's time.
//!
//! Times are the header stamp (`header.stamp.sec` + `nanosec`, nanoseconds) for every accepted
//! type that has a header; `std_msgs/msg/String` has none, so a terrain message's time is its
//! MCAP log time. Side speeds: a `JointState`'s wheel velocities (rad/s) times the wheel radius,
//! averaged over the joints of each side; or an `Odometry` / `TwistStamped` body twist (vx,
//! omega) through the ideal differential-drive inverse vl = vx - omega B/2, vr = vx + omega B/2
//! with the profile's track width B. Poses: position x, y (metres, local map frame) and the yaw
//! of the orientation quaternion (z up, [`yaw_from_quaternion`]).

use super::schema::{full_type_name, Arity, Field, Kind, Primitive, Schema, Value};

/// Accepted types for the side speeds.
pub const SIDE_SPEED_TYPES: &[&str] =
    &["sensor_msgs/msg/JointState", "nav_msgs/msg/Odometry", "geometry_msgs/msg/TwistStamped"];
/// Accepted types for the poses.
pub const POSE_TYPES: &[&str] =
    &["nav_msgs/msg/Odometry", "geometry_msgs/msg/PoseStamped", "geometry_msgs/msg/PoseWithCovarianceStamped"];
/// Accepted type for a terrain topic.
pub const TERRAIN_TYPES: &[&str] = &["std_msgs/msg/String"];

/// Yaw (rad, anticlockwise about z, in (-pi, pi]) of the orientation quaternion (x, y, z, w),
/// z up: yaw = atan2(2(wz + xy), 1 - 2(y^2 + z^2)), the z-y-x (yaw-pitch-roll) Euler angle
/// (e.g. Diebel 2006, "Representing attitude: Euler angles, unit quaternions, and rotation
/// vectors"). The quaternion is normalised first; `None` for a zero or non-finite one.
pub fn yaw_from_quaternion(x: f64, y: f64, z: f64, w: f64) -> Option<f64> {
    let norm = (x * x + y * y + z * z + w * w).sqrt();
    if !(norm.is_finite() && norm > 1e-9) {
        return None;
    }
    let (x, y, z, w) = (x / norm, y / norm, z / norm, w / norm);
    Some((2.0 * (w * z + x * y)).atan2(1.0 - 2.0 * (y * y + z * z)))
}

/// Field-index paths of a header stamp.
#[derive(Debug, Clone)]
pub struct StampPaths {
    sec: Vec<usize>,
    nanosec: Vec<usize>,
}

/// How to get side speeds out of a message.
#[derive(Debug, Clone)]
pub enum SideExtract {
    Joints {
        stamp: StampPaths,
        name: Vec<usize>,
        velocity: Vec<usize>,
        left: Vec<String>,
        right: Vec<String>,
        wheel_radius_m: f64,
    },
    Twist {
        stamp: StampPaths,
        vx: Vec<usize>,
        omega: Vec<usize>,
        half_track_m: f64,
    },
}

/// How to get a pose out of a message: paths of x, y and the quaternion x, y, z, w.
#[derive(Debug, Clone)]
pub struct PoseExtract {
    stamp: StampPaths,
    xy: [Vec<usize>; 2],
    quaternion: [Vec<usize>; 4],
}

/// How to get the text of a `std_msgs/msg/String`.
#[derive(Debug, Clone)]
pub struct TextExtract {
    data: Vec<usize>,
}

/// Side speeds at a time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SideSample {
    pub t_ns: i64,
    pub left_mps: f64,
    pub right_mps: f64,
}

/// A pose at a time; `number` is the 1-based message number on its topic.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PoseSample {
    pub t_ns: i64,
    pub x_m: f64,
    pub y_m: f64,
    pub yaw_rad: f64,
    pub number: usize,
}

/// A problem with a message or its type; the caller adds file and topic.
#[derive(Debug, Clone, PartialEq)]
pub enum ExtractError {
    /// The type does not have the fields the reader needs.
    Type(String),
    /// A wheel joint named in the map is missing from a message.
    Joint { joint: String, key: &'static str, present: Vec<String> },
    /// A message holds a value the reader cannot use.
    Message(String),
}

/// Checks that `dotted` is a single field whose type satisfies `ok`, described by `expected`.
fn leaf(
    schema: &Schema,
    dotted: &str,
    expected: &str,
    ok: impl Fn(&Field) -> bool,
) -> Result<Vec<usize>, ExtractError> {
    let (path, field) = schema.path(dotted).map_err(ExtractError::Type)?;
    if ok(field) {
        Ok(path)
    } else {
        Err(ExtractError::Type(format!("field {dotted} of {} is not {expected}", schema.name())))
    }
}

fn is_number(f: &Field) -> bool {
    f.arity == Arity::Single && matches!(f.kind, Kind::Primitive(p) if p != Primitive::String && p != Primitive::Bool)
}

fn number_path(schema: &Schema, dotted: &str) -> Result<Vec<usize>, ExtractError> {
    leaf(schema, dotted, "a number", is_number)
}

fn stamp_paths(schema: &Schema) -> Result<StampPaths, ExtractError> {
    Ok(StampPaths {
        sec: number_path(schema, "header.stamp.sec")?,
        nanosec: number_path(schema, "header.stamp.nanosec")?,
    })
}

impl SideExtract {
    /// The plan for a side-speed topic of type `type_name` (already checked to be accepted).
    pub fn new(
        schema: &Schema,
        type_name: &str,
        wheels: Option<&super::map::WheelJoints>,
        track_width_m: f64,
    ) -> Result<SideExtract, ExtractError> {
        let stamp = stamp_paths(schema)?;
        let full = full_type_name(type_name);
        match (full.as_str(), wheels) {
            ("sensor_msgs/msg/JointState", Some(w)) => {
                let name = leaf(schema, "name", "a sequence of strings", |f| {
                    f.arity == Arity::Sequence && f.kind == Kind::Primitive(Primitive::String)
                })?;
                let velocity = leaf(schema, "velocity", "a sequence of numbers", |f| {
                    f.arity == Arity::Sequence && matches!(f.kind, Kind::Primitive(p) if p != Primitive::String)
                })?;
                Ok(SideExtract::Joints {
                    stamp,
                    name,
                    velocity,
                    left: w.left.clone(),
                    right: w.right.clone(),
                    wheel_radius_m: w.wheel_radius_m,
                })
            }
            ("sensor_msgs/msg/JointState", None) => Err(ExtractError::Type(
                "a sensor_msgs/msg/JointState topic needs left_joints, right_joints and wheel_radius_m in [side_speeds]"
                    .to_string(),
            )),
            (_, Some(_)) => Err(ExtractError::Type(format!(
                "left_joints, right_joints and wheel_radius_m apply to sensor_msgs/msg/JointState only, this topic holds {full}; remove them to use its twist"
            ))),
            ("nav_msgs/msg/Odometry", None) => Ok(SideExtract::Twist {
                stamp,
                vx: number_path(schema, "twist.twist.linear.x")?,
                omega: number_path(schema, "twist.twist.angular.z")?,
                half_track_m: 0.5 * track_width_m,
            }),
            (_, None) => Ok(SideExtract::Twist {
                stamp,
                vx: number_path(schema, "twist.linear.x")?,
                omega: number_path(schema, "twist.angular.z")?,
                half_track_m: 0.5 * track_width_m,
            }),
        }
    }

    /// The side speeds of one decoded message.
    pub fn sample(&self, v: &Value) -> Result<SideSample, ExtractError> {
        match self {
            SideExtract::Twist { stamp, vx, omega, half_track_m } => {
                let t_ns = stamp_ns(v, stamp)?;
                let vx = finite(v, vx, "twist linear.x")?;
                let omega = finite(v, omega, "twist angular.z")?;
                Ok(SideSample { t_ns, left_mps: vx - omega * half_track_m, right_mps: vx + omega * half_track_m })
            }
            SideExtract::Joints { stamp, name, velocity, left, right, wheel_radius_m } => {
                let t_ns = stamp_ns(v, stamp)?;
                let names = v.at(name).and_then(Value::as_list).unwrap_or(&[]);
                let speeds = v.at(velocity).and_then(Value::as_list).unwrap_or(&[]);
                let side = |joints: &[String], key: &'static str| -> Result<f64, ExtractError> {
                    let mut sum = 0.0;
                    for joint in joints {
                        let Some(i) = names.iter().position(|n| n.as_str() == Some(joint.as_str())) else {
                            let present = names.iter().filter_map(|n| n.as_str().map(str::to_string)).collect();
                            return Err(ExtractError::Joint { joint: joint.clone(), key, present });
                        };
                        let w = speeds.get(i).and_then(Value::as_f64).ok_or_else(|| {
                            ExtractError::Message(format!(
                                "has {} velocities for {} joint names, so joint {joint} has no velocity",
                                speeds.len(),
                                names.len()
                            ))
                        })?;
                        if !w.is_finite() {
                            return Err(ExtractError::Message(format!("velocity of joint {joint} is {w}")));
                        }
                        sum += w;
                    }
                    Ok(sum / joints.len() as f64 * wheel_radius_m)
                };
                Ok(SideSample { t_ns, left_mps: side(left, "left_joints")?, right_mps: side(right, "right_joints")? })
            }
        }
    }
}

impl PoseExtract {
    /// The plan for a pose topic of type `type_name` (already checked to be accepted).
    pub fn new(schema: &Schema, type_name: &str) -> Result<PoseExtract, ExtractError> {
        let base = match full_type_name(type_name).as_str() {
            "geometry_msgs/msg/PoseStamped" => "pose",
            _ => "pose.pose",
        };
        let p = |field: &str| number_path(schema, &format!("{base}.{field}"));
        Ok(PoseExtract {
            stamp: stamp_paths(schema)?,
            xy: [p("position.x")?, p("position.y")?],
            quaternion: [p("orientation.x")?, p("orientation.y")?, p("orientation.z")?, p("orientation.w")?],
        })
    }

    /// The pose of one decoded message; `number` is its message number on the topic.
    pub fn sample(&self, v: &Value, number: usize) -> Result<PoseSample, ExtractError> {
        let t_ns = stamp_ns(v, &self.stamp)?;
        let [x, y] = &self.xy;
        let [qx, qy, qz, qw] = &self.quaternion;
        let q = [finite(v, qx, "orientation.x")?, finite(v, qy, "orientation.y")?, finite(v, qz, "orientation.z")?];
        let yaw_rad = yaw_from_quaternion(q[0], q[1], q[2], finite(v, qw, "orientation.w")?)
            .ok_or_else(|| ExtractError::Message("orientation is the zero quaternion (no heading)".to_string()))?;
        Ok(PoseSample { t_ns, x_m: finite(v, x, "position.x")?, y_m: finite(v, y, "position.y")?, yaw_rad, number })
    }
}

impl TextExtract {
    pub fn new(schema: &Schema) -> Result<TextExtract, ExtractError> {
        let data = leaf(schema, "data", "a string", |f| {
            f.arity == Arity::Single && f.kind == Kind::Primitive(Primitive::String)
        })?;
        Ok(TextExtract { data })
    }

    pub fn text<'v>(&self, v: &'v Value) -> Result<&'v str, ExtractError> {
        v.at(&self.data).and_then(Value::as_str).ok_or_else(|| ExtractError::Message("has no data string".to_string()))
    }
}

fn finite(v: &Value, path: &[usize], what: &str) -> Result<f64, ExtractError> {
    match v.at(path).and_then(Value::as_f64) {
        Some(x) if x.is_finite() => Ok(x),
        Some(x) => Err(ExtractError::Message(format!("{what} is {x}"))),
        None => Err(ExtractError::Message(format!("has no {what}"))),
    }
}

/// Header stamp in nanoseconds.
fn stamp_ns(v: &Value, stamp: &StampPaths) -> Result<i64, ExtractError> {
    let sec = v.at(&stamp.sec).and_then(Value::as_i64);
    let nanosec = v.at(&stamp.nanosec).and_then(Value::as_i64);
    match (sec, nanosec) {
        (Some(s), Some(n)) => s
            .checked_mul(1_000_000_000)
            .and_then(|ns| ns.checked_add(n))
            .ok_or_else(|| ExtractError::Message(format!("header stamp {s} s {n} ns is out of range"))),
        _ => Err(ExtractError::Message("has no header stamp".to_string())),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use std::f64::consts::PI;

    #[test]
    fn yaw_of_a_rotation_about_z() {
        // Closed form: a rotation by theta about z is q = (0, 0, sin(theta/2), cos(theta/2))
        // (common practice, no source), whose yaw is theta wrapped to (-pi, pi].
        for theta in [0.0, 0.3, -1.2, 2.9, PI - 1e-6, 4.0] {
            let (s, c) = (theta / 2.0f64).sin_cos();
            let yaw = yaw_from_quaternion(0.0, 0.0, s, c).expect("unit quaternion");
            let expected = theta.sin().atan2(theta.cos());
            assert_relative_eq!(yaw, expected, epsilon = 1e-12);
        }
        // A scaled quaternion has the same yaw.
        let yaw = yaw_from_quaternion(0.0, 0.0, 3.0 * 0.4f64.sin(), 3.0 * 0.4f64.cos()).expect("scaled");
        assert_relative_eq!(yaw, 0.8, epsilon = 1e-12);
        assert!(yaw_from_quaternion(0.0, 0.0, 0.0, 0.0).is_none());
        assert!(yaw_from_quaternion(f64::NAN, 0.0, 0.0, 1.0).is_none());
    }

    /// Hamilton product (w, x, y, z) of a and b (common practice, no source).
    fn mul(a: [f64; 4], b: [f64; 4]) -> [f64; 4] {
        let [aw, ax, ay, az] = a;
        let [bw, bx, by, bz] = b;
        [
            aw * bw - ax * bx - ay * by - az * bz,
            aw * bx + ax * bw + ay * bz - az * by,
            aw * by - ax * bz + ay * bw + az * bx,
            aw * bz + ax * by - ay * bx + az * bw,
        ]
    }

    #[test]
    fn yaw_with_roll_and_pitch() {
        // q = q_z(yaw) q_y(pitch) q_x(roll): the z-y-x Euler sequence, whose first angle is the
        // heading. Its rotation matrix has R10 = cos(pitch) sin(yaw), R00 = cos(pitch) cos(yaw),
        // so yaw = atan2(R10, R00) for |pitch| < 90 degrees (closed form, common practice).
        let (yaw, pitch, roll) = (1.1f64, 0.3f64, -0.4f64);
        let qz = [(yaw / 2.0).cos(), 0.0, 0.0, (yaw / 2.0).sin()];
        let qy = [(pitch / 2.0).cos(), 0.0, (pitch / 2.0).sin(), 0.0];
        let qx = [(roll / 2.0).cos(), (roll / 2.0).sin(), 0.0, 0.0];
        let [w, x, y, z] = mul(mul(qz, qy), qx);
        let got = yaw_from_quaternion(x, y, z, w).expect("unit");
        assert_relative_eq!(got, yaw, epsilon = 1e-12);
        // With roll and pitch the naive 2 atan2(z, w) is wrong: the test would catch using it.
        assert!((2.0 * z.atan2(w) - yaw).abs() > 1e-3);
    }

    #[test]
    fn twist_side_speeds_use_the_ideal_inverse() {
        let schema = Schema::builtin("geometry_msgs/msg/TwistStamped").expect("builtin");
        let plan = SideExtract::new(&schema, "geometry_msgs/TwistStamped", None, 0.9).expect("plan");
        // TwistStamped: header(stamp(sec, nanosec), frame_id), twist(linear xyz, angular xyz).
        let v3 = |x: f64, y: f64, z: f64| Value::Struct(vec![Value::Float(x), Value::Float(y), Value::Float(z)]);
        let msg = Value::Struct(vec![
            Value::Struct(vec![Value::Struct(vec![Value::Int(12), Value::UInt(5)]), Value::Text("base".into())]),
            Value::Struct(vec![v3(1.0, 0.0, 0.0), v3(0.0, 0.0, 0.5)]),
        ]);
        let s = plan.sample(&msg).expect("sample");
        assert_eq!(s.t_ns, 12_000_000_005);
        // vl = vx - omega B/2 = 1 - 0.5 * 0.45, vr = 1 + 0.225 (ideal differential drive).
        assert_relative_eq!(s.left_mps, 0.775, epsilon = 1e-15);
        assert_relative_eq!(s.right_mps, 1.225, epsilon = 1e-15);
    }

    #[test]
    fn joints_are_averaged_and_missing_joints_listed() {
        let schema = Schema::builtin("sensor_msgs/msg/JointState").expect("builtin");
        let wheels = super::super::map::WheelJoints {
            left: vec!["fl".into(), "rl".into()],
            right: vec!["fr".into()],
            wheel_radius_m: 0.5,
        };
        let plan = SideExtract::new(&schema, "sensor_msgs/msg/JointState", Some(&wheels), 0.9).expect("plan");
        let names = Value::List(["fr", "fl", "rl"].iter().map(|s| Value::Text(s.to_string())).collect());
        let vel = Value::List([4.0, 2.0, 3.0].iter().map(|x| Value::Float(*x)).collect());
        let header =
            Value::Struct(vec![Value::Struct(vec![Value::Int(1), Value::UInt(0)]), Value::Text(String::new())]);
        let msg = Value::Struct(vec![header.clone(), names.clone(), Value::List(vec![]), vel, Value::List(vec![])]);
        let s = plan.sample(&msg).expect("sample");
        assert_relative_eq!(s.left_mps, 1.25, epsilon = 1e-15); // (2 + 3) / 2 * 0.5
        assert_relative_eq!(s.right_mps, 2.0, epsilon = 1e-15);
        let short = Value::Struct(vec![header, names, Value::List(vec![]), Value::List(vec![]), Value::List(vec![])]);
        assert!(matches!(plan.sample(&short), Err(ExtractError::Message(m)) if m.contains("0 velocities for 3")));
        let wheels = super::super::map::WheelJoints { left: vec!["xx".into()], ..wheels };
        let plan = SideExtract::new(&schema, "sensor_msgs/msg/JointState", Some(&wheels), 0.9).expect("plan");
        match plan.sample(&msg) {
            Err(ExtractError::Joint { joint, key, present }) => {
                assert_eq!((joint.as_str(), key), ("xx", "left_joints"));
                assert_eq!(present, ["fr", "fl", "rl"]);
            }
            other => panic!("{other:?}"),
        }
    }
}
