//! Reading COMTRADE records (IEEE C37.111-1999 and -2013): files written here by a small writer
//! that follows the standard's layout, read by nadir and cross-checked against the `comtrade`
//! package from the Python registry (pinned in tests/scipy_reference/requirements.txt, run
//! through NADIR_PYTHON as tests/scipy_crosscheck.rs does); and one test per refusal.

use nadir::recording::{read_frequency_record, FrequencyOrigin, FrequencyRecord, ReadOptions};
use std::f64::consts::PI;
use std::path::{Path, PathBuf};
use std::process::Command;

struct Ch {
    id: &'static str,
    unit: &'static str,
    a: f64,
    b: f64,
    skew_us: f64,
    ps: &'static str,
}

struct Rec {
    rev: &'static str,
    format: &'static str,
    analog: Vec<Ch>,
    n_status: usize,
    rates: Vec<(f64, u64)>,
    start: &'static str,
    trigger: &'static str,
    timemult: f64,
    /// Per sample: timestamp and raw analog values.
    samples: Vec<(u32, Vec<f64>)>,
}

impl Rec {
    fn cfg(&self) -> String {
        let mut s = format!("Demo substation,REC-7,{}\n", self.rev);
        s += &format!(
            "{},{}A,{}D\n",
            self.analog.len() + self.n_status,
            self.analog.len(),
            self.n_status
        );
        for (i, c) in self.analog.iter().enumerate() {
            s += &format!(
                "{},{},,,{},{},{},{},-32767,32767,1,1,{}\n",
                i + 1,
                c.id,
                c.unit,
                c.a,
                c.b,
                c.skew_us,
                c.ps
            );
        }
        for i in 0..self.n_status {
            s += &format!("{},CB{},,,0\n", self.analog.len() + i + 1, i + 1);
        }
        s += "50\n";
        if self.rates.is_empty() {
            s += &format!("0\n0,{}\n", self.samples.len());
        } else {
            s += &format!("{}\n", self.rates.len());
            for (r, e) in &self.rates {
                s += &format!("{r},{e}\n");
            }
        }
        s += &format!(
            "{}\n{}\n{}\n{}\n",
            self.start, self.trigger, self.format, self.timemult
        );
        if self.rev == "2013" {
            s += "+1h,0\n0,0\n";
        }
        s
    }

    fn dat(&self) -> Vec<u8> {
        let words = self.n_status.div_ceil(16);
        let mut out = Vec::new();
        for (k, (ts, values)) in self.samples.iter().enumerate() {
            match self.format {
                "ASCII" => {
                    let mut line = format!("{},{}", k + 1, ts);
                    for v in values {
                        line += &format!(",{v}");
                    }
                    for _ in 0..self.n_status {
                        line += ",0";
                    }
                    line += "\r\n";
                    out.extend(line.as_bytes());
                }
                f => {
                    out.extend((k as u32 + 1).to_le_bytes());
                    out.extend(ts.to_le_bytes());
                    for &v in values {
                        match f {
                            "BINARY" => out.extend((v as i16).to_le_bytes()),
                            "BINARY32" => out.extend((v as i32).to_le_bytes()),
                            _ => out.extend((v as f32).to_le_bytes()),
                        }
                    }
                    out.extend(vec![0u8; 2 * words]);
                }
            }
        }
        out
    }

    fn write(&self, tag: &str) -> PathBuf {
        let d = dir(tag);
        std::fs::write(d.join("rec.cfg"), self.cfg()).unwrap();
        std::fs::write(d.join("rec.dat"), self.dat()).unwrap();
        d.join("rec.cfg")
    }

    fn write_cff(&self, tag: &str) -> PathBuf {
        let d = dir(tag);
        let mut all = format!("--- file type: CFG ---\n{}", self.cfg()).into_bytes();
        let dat = self.dat();
        if self.format == "ASCII" {
            all.extend(b"--- file type: DAT ASCII ---\n");
        } else {
            all.extend(
                format!("--- file type: DAT {}: {} ---\n", self.format, dat.len()).as_bytes(),
            );
        }
        all.extend(dat);
        all.extend(b"--- file type: HDR ---\nfictional record for tests\n");
        std::fs::write(d.join("rec.cff"), all).unwrap();
        d.join("rec.cff")
    }
}

fn dir(tag: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("nadir-comtrade-{}-{tag}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn hz(a: f64, b: f64) -> Ch {
    Ch {
        id: "FREQ",
        unit: "Hz",
        a,
        b,
        skew_us: 0.0,
        ps: "P",
    }
}

fn volts(id: &'static str, a: f64) -> Ch {
    Ch {
        id,
        unit: "kV",
        a,
        b: 0.0,
        skew_us: 0.0,
        ps: "P",
    }
}

fn amps() -> Ch {
    Ch {
        id: "IA",
        unit: "A",
        a: 0.1,
        b: 0.0,
        skew_us: 0.0,
        ps: "S",
    }
}

/// A frequency falling from 50 Hz by 0.8 Hz/s, as raw counts with a = 0.001 Hz, b = 45 Hz.
fn frequency_record(rev: &'static str, format: &'static str, n: usize) -> Rec {
    Rec {
        rev,
        format,
        analog: vec![amps(), hz(0.001, 45.0)],
        n_status: 3,
        rates: vec![(1000.0, n as u64)],
        start: "31/12/2025,23:59:59.900000",
        trigger: "01/01/2026,00:00:00.150000",
        timemult: 1.0,
        samples: (0..n)
            .map(|k| {
                let t = k as f64 / 1000.0;
                let f = 50.0 - 0.8 * t;
                (
                    k as u32 * 1000,
                    vec![
                        (100.0 * (t * 7.0).sin()).round(),
                        ((f - 45.0) / 0.001).round(),
                    ],
                )
            })
            .collect(),
    }
}

fn read(p: &Path) -> FrequencyRecord {
    read_frequency_record(p, &ReadOptions::default()).unwrap()
}

fn refused(p: &Path) -> String {
    match read_frequency_record(p, &ReadOptions::default()) {
        Ok(_) => panic!("{} was accepted", p.display()),
        Err(e) => {
            assert!(matches!(e, nadir::Error::Input(_)), "{e:?}");
            e.to_string()
        }
    }
}

/// The record as the Python `comtrade` package reads it: times, the channel's values and the
/// trigger time. `None` when the package is not installed and NADIR_SKIP_SCIPY=1.
fn python_reading(cfg: &Path, channel: usize) -> Option<(Vec<f64>, Vec<f64>, f64)> {
    let python = std::env::var("NADIR_PYTHON").unwrap_or_else(|_| "python3".to_string());
    let script = format!(
        "import json, comtrade\n\
         r = comtrade.Comtrade(use_double_precision=True)\n\
         r.load({:?})\n\
         print(json.dumps({{'t': list(r.time), 'v': list(r.analog[{channel}]), 'trigger': r.trigger_time}}))\n",
        cfg.display().to_string()
    );
    let out = Command::new(python)
        .args(["-W", "ignore", "-c", &script])
        .output();
    let out = match out {
        Ok(o) if o.status.success() => o,
        other => {
            let why = match other {
                Ok(o) => String::from_utf8_lossy(&o.stderr).into_owned(),
                Err(e) => e.to_string(),
            };
            if std::env::var("NADIR_SKIP_SCIPY").as_deref() == Ok("1") {
                eprintln!("comtrade cross-check SKIPPED (NADIR_SKIP_SCIPY=1): {why}");
                return None;
            }
            panic!(
                "the Python comtrade package cannot run: {why}. Run the tests with \
                 scripts/test.sh (it installs the pinned package in .venv-reference/), or set \
                 NADIR_SKIP_SCIPY=1 to skip this check explicitly"
            );
        }
    };
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let list = |k: &str| -> Vec<f64> {
        v[k].as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_f64().unwrap())
            .collect()
    };
    Some((list("t"), list("v"), v["trigger"].as_f64().unwrap()))
}

fn cross_check(p: &Path, channel: usize, r: &FrequencyRecord) {
    let Some((t, v, trigger)) = python_reading(p, channel) else {
        return;
    };
    assert_eq!(t.len(), r.times_s.len(), "sample count");
    for i in 0..t.len() {
        assert!(
            (t[i] - r.times_s[i]).abs() < 1e-9,
            "time {i}: {} vs {}",
            t[i],
            r.times_s[i]
        );
        assert!(
            (v[i] - r.frequency_hz[i]).abs() < 1e-9,
            "value {i}: {} vs {}",
            v[i],
            r.frequency_hz[i]
        );
    }
    // The package keeps time stamps to the microsecond.
    assert!(
        (trigger - r.trigger_s.unwrap()).abs() < 1e-6,
        "{trigger} vs {:?}",
        r.trigger_s
    );
}

#[test]
fn ascii_1999_frequency_channel_agrees_with_the_python_reader() {
    let rec = frequency_record("1999", "ASCII", 500);
    let p = rec.write("a99");
    let r = read(&p);
    assert_eq!(
        r.origin,
        FrequencyOrigin::Measured {
            channel: "FREQ".to_string()
        }
    );
    assert_eq!(r.nominal_hz, Some(50.0));
    assert_eq!(r.start_time.as_deref(), Some("31/12/2025,23:59:59.900000"));
    // Across midnight and a year: 0.1 s to midnight, then 0.15 s.
    assert!(
        (r.trigger_s.unwrap() - 0.25).abs() < 1e-9,
        "{:?}",
        r.trigger_s
    );
    assert_eq!(r.times_s.len(), 500);
    assert!((r.times_s[499] - 0.499).abs() < 1e-12);
    // a·x + b with x rounded to counts of 1 mHz.
    assert!((r.frequency_hz[250] - (50.0 - 0.8 * 0.25)).abs() < 0.0006);
    cross_check(&p, 1, &r);
}

#[test]
fn binary_formats_and_the_single_file_agree_with_the_python_reader() {
    for (tag, rev, format) in [
        ("b99", "1999", "BINARY"),
        ("b13", "2013", "BINARY"),
        ("b32", "2013", "BINARY32"),
        ("f32", "2013", "FLOAT32"),
    ] {
        let rec = frequency_record(rev, format, 300);
        let p = rec.write(tag);
        let r = read(&p);
        cross_check(&p, 1, &r);
        let q = rec.write_cff(&format!("{tag}-cff"));
        let s = read(&q);
        assert_eq!(s.times_s, r.times_s, "{format} cff");
        assert_eq!(s.frequency_hz, r.frequency_hz, "{format} cff");
        assert_eq!(s.trigger_s, r.trigger_s);
        cross_check(&q, 1, &s);
    }
    let rec = frequency_record("2013", "ASCII", 300);
    let p = rec.write_cff("a13-cff");
    let r = read(&p);
    assert_eq!(r.times_s.len(), 300);
    cross_check(&p, 1, &r);
    cross_check(&rec.write("a13"), 1, &r);
}

/// Two sampling rates: sample n of a rate lies (n − first)/samp after the previous rate's last
/// sample (C37.111 sampling-rate lines); no sampling gap is reported where the rate changes.
#[test]
fn two_sampling_rates_give_the_declared_times() {
    let mut rec = frequency_record("1999", "ASCII", 150);
    rec.rates = vec![(1000.0, 100), (200.0, 150)];
    let p = rec.write("rates");
    let r = read(&p);
    assert!((r.times_s[99] - 0.099).abs() < 1e-12);
    assert!((r.times_s[100] - 0.104).abs() < 1e-12);
    assert!((r.times_s[149] - (0.099 + 50.0 / 200.0)).abs() < 1e-12);
    cross_check(&p, 1, &r);
}

/// Timestamps only (no sampling rate): times are timestamp × timemult µs; a voltage waveform of
/// 49.5 Hz sampled at 2 kHz (timestamps of 500 µs with timemult 1, or of 50 with timemult 10)
/// gives 49.5 Hz from its zero crossings.
#[test]
fn timestamps_with_timemult_and_a_voltage_waveform() {
    for (tag, step, mult) in [("ts1", 500u32, 1.0), ("ts10", 50, 10.0)] {
        let n = 1000;
        let rec = Rec {
            rev: "2013",
            format: "BINARY",
            analog: vec![amps(), volts("VA", 0.01), volts("VB", 0.01)],
            n_status: 0,
            rates: vec![],
            start: "14/03/2026,09:12:05.000000",
            trigger: "14/03/2026,09:12:05.100000",
            timemult: mult,
            samples: (0..n)
                .map(|k| {
                    let t = k as f64 * 500e-6;
                    let v = 9000.0 * (2.0 * PI * 49.5 * t).sin();
                    (k as u32 * step, vec![0.0, v.round(), (v * 0.5).round()])
                })
                .collect(),
        };
        let p = rec.write(tag);
        let r = read(&p);
        match &r.origin {
            FrequencyOrigin::Estimated { channel, .. } => assert_eq!(channel, "VA"),
            o => panic!("{o:?}"),
        }
        for f in &r.frequency_hz {
            assert!((f - 49.5).abs() < 1e-3, "{f}");
        }
        assert!((r.trigger_s.unwrap() - 0.1).abs() < 1e-9);
        let Some((t, _, _)) = python_reading(&p, 1) else {
            continue;
        };
        assert!((t[999] - 999.0 * 500e-6).abs() < 1e-9, "{}", t[999]);
    }
}

#[test]
fn the_channel_can_be_named() {
    let rec = frequency_record("1999", "ASCII", 200);
    let p = rec.write("named");
    let o = ReadOptions {
        channel: Some("ia".to_string()),
        ..ReadOptions::default()
    };
    let e = read_frequency_record(&p, &o).unwrap_err().to_string();
    assert!(e.contains("channel `IA` is in `A`, neither Hz"), "{e}");
    let o = ReadOptions {
        channel: Some("VX".to_string()),
        ..ReadOptions::default()
    };
    let e = read_frequency_record(&p, &o).unwrap_err().to_string();
    assert!(
        e.contains("no analog channel `VX`") && e.contains("`FREQ` [Hz]"),
        "{e}"
    );
}

fn edit_cfg(p: &Path, from: &str, to: &str) {
    let s = std::fs::read_to_string(p).unwrap();
    assert!(s.contains(from), "{from}");
    std::fs::write(p, s.replacen(from, to, 1)).unwrap();
}

#[test]
fn bad_configurations_name_their_line() {
    let base = || frequency_record("1999", "ASCII", 50);
    let p = base().write("rev");
    edit_cfg(&p, "REC-7,1999", "REC-7,2001");
    assert!(refused(&p).contains("rec.cfg:1: the configuration has revision year `2001`"));
    let p = base().write("rev91");
    edit_cfg(&p, "REC-7,1999", "REC-7");
    assert!(refused(&p).contains("no revision year (the 1991 revision)"));
    let p = base().write("counts");
    edit_cfg(&p, "5,2A,3D", "5,3A,3D");
    assert!(refused(&p).contains("rec.cfg:2: 5 channels in total, but 3 analog and 3 status"));
    let p = base().write("fields");
    edit_cfg(&p, ",1,1,S\n", ",1,S\n");
    assert!(refused(&p).contains("rec.cfg:3: analog channel 1 has 12 fields"));
    let p = base().write("type");
    edit_cfg(&p, "ASCII\n", "FLOAT32\n");
    assert!(
        refused(&p).contains("the data file type `FLOAT32` is not one the 1999 revision defines")
    );
    let p = base().write("stamp");
    edit_cfg(&p, "31/12/2025,23:59:59.900000", "2025-12-31,23:59:59.9");
    assert!(refused(&p).contains("the first sample time stamp"));
    let p = base().write("short");
    let s = std::fs::read_to_string(&p).unwrap();
    std::fs::write(&p, s.lines().take(5).collect::<Vec<_>>().join("\n")).unwrap();
    assert!(refused(&p).contains("the configuration ends before its"));
    let p = base().write("swapped");
    std::fs::write(&p, "time_s,f\n0,50\n0.02,49.9\n").unwrap();
    assert!(refused(&p).contains("rec.cfg:2: the file does not read as a COMTRADE configuration"));
    let p = base().write("nodat");
    std::fs::remove_file(p.with_extension("dat")).unwrap();
    assert!(refused(&p).contains("is not beside the configuration"));
    let rec = Rec {
        analog: vec![amps()],
        ..base()
    };
    let p = Rec {
        samples: rec.samples.iter().map(|(t, v)| (*t, vec![v[0]])).collect(),
        ..rec
    }
    .write("nochan");
    assert!(refused(&p).contains("no analog channel in Hz or in V or kV (its channels: `IA` [A])"));
    let e = refused(&p.with_extension("dat"));
    assert!(e.contains("through its configuration file"), "{e}");
}

#[test]
fn bad_data_name_the_sample() {
    let base = || frequency_record("1999", "ASCII", 50);
    // ASCII: a missing value, a line with a field short, a sample number that jumps.
    let rec = base();
    let p = rec.write("miss");
    let dat = std::fs::read_to_string(p.with_extension("dat")).unwrap();
    let lines: Vec<&str> = dat.lines().collect();
    let mut bad = lines.clone();
    let l = bad[9].rsplitn(5, ',').last().unwrap().to_string() + ",99999,0,0,0";
    bad[9] = &l;
    std::fs::write(p.with_extension("dat"), bad.join("\n")).unwrap();
    let e = refused(&p);
    assert!(
        e.contains("line 10, sample 10: channel `FREQ` has no value"),
        "{e}"
    );
    let mut bad = lines.clone();
    bad[4] = "5,4000,1";
    std::fs::write(p.with_extension("dat"), bad.join("\n")).unwrap();
    assert!(refused(&p).contains("rec.dat:5: the line has 3 fields"));
    let mut bad = lines.clone();
    bad.remove(20);
    std::fs::write(p.with_extension("dat"), bad.join("\n")).unwrap();
    assert!(refused(&p).contains("the sample number 22 does not follow 20"));
    let bad = &lines[..40];
    std::fs::write(p.with_extension("dat"), bad.join("\n")).unwrap();
    assert!(refused(&p).contains("the data file has 40 samples, fewer than the 50"));
    // Binary: cut inside a sample, and a missing value.
    let rec = frequency_record("2013", "BINARY", 50);
    let p = rec.write("trunc");
    let dat = std::fs::read(p.with_extension("dat")).unwrap();
    std::fs::write(p.with_extension("dat"), &dat[..dat.len() - 3]).unwrap();
    let e = refused(&p);
    assert!(e.contains("ends inside sample 50"), "{e}");
    let mut dat = dat.clone();
    let size = 8 + 2 * 2 + 2;
    dat[7 * size + 10..7 * size + 12].copy_from_slice(&i16::MIN.to_le_bytes());
    std::fs::write(p.with_extension("dat"), &dat).unwrap();
    let e = refused(&p);
    assert!(
        e.contains("sample 8 (byte 98): channel `FREQ` has no value"),
        "{e}"
    );
    // Timestamps that go back (no sampling rate).
    let mut rec = frequency_record("2013", "ASCII", 50);
    rec.rates = vec![];
    rec.samples[30].0 = 1000;
    let e = refused(&rec.write("back"));
    assert!(
        e.contains("rec.dat:31: sample 31: the time 0.001 s goes back in time"),
        "{e}"
    );
    // A declared length above the limit is refused before reading.
    let p = frequency_record("1999", "ASCII", 50).write("limit");
    let o = ReadOptions {
        limits: Some(
            nadir::input::Limits::defaults().with(nadir::input::limits::RECORD_SAMPLES, 20),
        ),
        ..ReadOptions::default()
    };
    let e = read_frequency_record(&p, &o).unwrap_err().to_string();
    assert!(
        e.contains("declares 50 samples, above the limit max_record_samples = 20"),
        "{e}"
    );
}
