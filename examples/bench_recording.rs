//! Benchmark of the recording reader: writes a one-hour ROS 2 recording (zstd chunks) with
//! wheel joint states and reference odometry at 50 Hz plus an unmapped 16 KiB camera-like topic
//! at 2 Hz, then reads it as a drive log. Prints the file size, read time, throughput and the
//! peak resident memory (which stays far below the file size: the reader streams).
//!
//! `cargo run --release --example bench_recording`

use std::collections::BTreeMap;
use std::io::BufWriter;
use std::path::Path;
use std::time::Instant;

use mcap::records::MessageHeader;
use mcap::{Compression, WriteOptions};
use skidroute::limits::Limits;
use skidroute::progress::NoProgress;
use skidroute::recording::{read_recording, RecordingMap};

const RATE_HZ: u64 = 50;
const DURATION_S: u64 = 3600;
const T0_NS: u64 = 1_767_225_600_000_000_000;

/// A little-endian CDR payload builder (alignment from the end of the 4-byte header).
struct Cdr(Vec<u8>);

impl Cdr {
    fn new() -> Cdr {
        Cdr(vec![0x00, 0x01, 0x00, 0x00])
    }
    fn align(&mut self, n: usize) {
        while !(self.0.len() - 4).is_multiple_of(n) {
            self.0.push(0);
        }
    }
    fn u32(&mut self, v: u32) {
        self.align(4);
        self.0.extend_from_slice(&v.to_le_bytes());
    }
    fn i32(&mut self, v: i32) {
        self.align(4);
        self.0.extend_from_slice(&v.to_le_bytes());
    }
    fn f64(&mut self, v: f64) {
        self.align(8);
        self.0.extend_from_slice(&v.to_le_bytes());
    }
    fn string(&mut self, s: &str) {
        self.u32(s.len() as u32 + 1);
        self.0.extend_from_slice(s.as_bytes());
        self.0.push(0);
    }
    fn header(&mut self, t_ns: u64, frame: &str) {
        self.i32((t_ns / 1_000_000_000) as i32);
        self.u32((t_ns % 1_000_000_000) as u32);
        self.string(frame);
    }
    fn f64s(&mut self, xs: &[f64]) {
        self.u32(xs.len() as u32);
        xs.iter().for_each(|x| self.f64(*x));
    }
}

const JOINT_STATE: &str = "std_msgs/Header header\nstring[] name\nfloat64[] position\nfloat64[] velocity\n\
float64[] effort\n================================================================================\n\
MSG: std_msgs/Header\nbuiltin_interfaces/Time stamp\nstring frame_id\n";
const MAP: &str = "[side_speeds]\ntopic = \"/joint_states\"\nleft_joints = [\"fl\", \"rl\"]\n\
right_joints = [\"fr\", \"rr\"]\nwheel_radius_m = 0.25\n[pose]\ntopic = \"/odom\"\n[terrain]\nvalue = \"grass\"\n";

fn write_recording(path: &Path) -> mcap::McapResult<u64> {
    let file = std::fs::File::create(path)?;
    let options = WriteOptions::new().compression(Some(Compression::Zstd)).profile("ros2");
    let mut w = mcap::Writer::with_options(BufWriter::new(file), options)?;
    let none = BTreeMap::new();
    let js = w.add_schema("sensor_msgs/msg/JointState", "ros2msg", JOINT_STATE.as_bytes())?;
    // Odometry and the camera-like type with blank definitions: the built-in one is used.
    let odom = w.add_schema("nav_msgs/msg/Odometry", "ros2msg", b"")?;
    let image = w.add_schema("sensor_msgs/msg/CompressedImage", "ros2msg", b"")?;
    let js_ch = w.add_channel(js, "/joint_states", "cdr", &none)?;
    let odom_ch = w.add_channel(odom, "/odom", "cdr", &none)?;
    let image_ch = w.add_channel(image, "/camera/compressed", "cdr", &none)?;
    let period_ns = 1_000_000_000 / RATE_HZ;
    let (mut x, mut y, mut yaw) = (0.0f64, 0.0f64, 0.0f64);
    let mut noise = 12345u64;
    let mut messages = 0u64;
    for k in 0..DURATION_S * RATE_HZ {
        let t = T0_NS + k * period_ns;
        let (l, r) = if (k / 200) % 3 == 0 { (0.8, 1.2) } else { (1.0, 1.0) };
        let mut m = Cdr::new();
        m.header(t, "base_link");
        m.u32(4);
        ["fl", "fr", "rl", "rr"].iter().for_each(|n| m.string(n));
        m.f64s(&[0.0; 4]);
        m.f64s(&[l / 0.25, r / 0.25, l / 0.25, r / 0.25]);
        m.f64s(&[]);
        let head = |ch: u16| MessageHeader { channel_id: ch, sequence: k as u32, log_time: t, publish_time: t };
        w.write_to_known_channel(&head(js_ch), &m.0)?;
        let mut o = Cdr::new();
        o.header(t, "map");
        o.string("base_link");
        [x, y, 0.0, 0.0, 0.0, (yaw / 2.0).sin(), (yaw / 2.0).cos()].iter().for_each(|v| o.f64(*v));
        (0..36).for_each(|_| o.f64(0.0));
        [(l + r) / 2.0, 0.0, 0.0, 0.0, 0.0, (r - l) / 1.4].iter().for_each(|v| o.f64(*v));
        (0..36).for_each(|_| o.f64(0.0));
        w.write_to_known_channel(&head(odom_ch), &o.0)?;
        messages += 2;
        if k % (RATE_HZ / 2) == 0 {
            let mut c = Cdr::new();
            c.header(t, "camera");
            c.string("jpeg");
            c.u32(16 * 1024);
            for _ in 0..16 * 1024 {
                noise = noise.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
                c.0.push((noise >> 56) as u8);
            }
            w.write_to_known_channel(&head(image_ch), &c.0)?;
            messages += 1;
        }
        let dt = 1.0 / RATE_HZ as f64;
        let (vx, w_z) = (0.9 * (l + r) / 2.0, 0.9 * (r - l) / 1.4);
        x += vx * yaw.cos() * dt;
        y += vx * yaw.sin() * dt;
        yaw += w_z * dt;
    }
    w.finish()?;
    Ok(messages)
}

/// Peak resident memory of this process in MiB (Linux), if known.
fn peak_rss_mib() -> Option<f64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kib: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib / 1024.0)
}

fn main() {
    let dir = match tempfile::tempdir() {
        Ok(d) => d,
        Err(e) => panic!("tempdir: {e}"),
    };
    let path = dir.path().join("hour.mcap");
    let t0 = Instant::now();
    let messages = match write_recording(&path) {
        Ok(n) => n,
        Err(e) => panic!("writing the recording failed: {e}"),
    };
    let size = std::fs::metadata(&path).map(|m| m.len()).unwrap_or(0);
    println!(
        "wrote {messages} messages, {:.1} MiB (zstd chunks) in {:.1} s",
        size as f64 / 1048576.0,
        t0.elapsed().as_secs_f64()
    );
    let rss_before = peak_rss_mib().unwrap_or(f64::NAN);
    let limits = Limits { max_file_bytes: 1 << 34, ..Limits::default() };
    let map = match RecordingMap::parse(Path::new("map.toml"), MAP, &limits) {
        Ok(m) => m,
        Err(e) => panic!("{e}"),
    };
    let t1 = Instant::now();
    let log = match read_recording(&path, &map, 0.9, &limits, &NoProgress) {
        Ok(l) => l,
        Err(e) => panic!("{e}"),
    };
    let read_s = t1.elapsed().as_secs_f64();
    println!(
        "read {} drive-log samples in {read_s:.2} s: {:.0} messages/s, {:.0} MiB/s of file",
        log.samples.len(),
        messages as f64 / read_s,
        size as f64 / 1048576.0 / read_s
    );
    println!(
        "peak resident memory: {:.0} MiB after writing, {:.0} MiB after reading",
        rss_before,
        peak_rss_mib().unwrap_or(f64::NAN)
    );
}
