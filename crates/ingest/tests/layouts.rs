//! Round trips through every shipped layout, and every kind of bad input.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use std::path::{Path, PathBuf};
use twistlot_ingest::{read_bytes, FormatSet, RejectKind, RigFormat};
use twistlot_model::plugin::RigFormatManifest;
use twistlot_model::{CurveData, Manifest, RecordKind, Stroke};
use twistlot_synth::{
    printed_resolution, write_decay_layout, write_gantry_json, write_layout, DecayModel, SpringModel,
    WriteStyle,
};

/// This crate's folder as cargo names it when running the test (not as compiled in),
/// so a test binary from a shared build cache reads this checkout's files.
fn crate_dir() -> std::path::PathBuf {
    std::env::var_os("CARGO_MANIFEST_DIR")
        .map_or_else(|| std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR")), std::path::PathBuf::from)
}

/// The shipped declarative layouts, and the demo plant's exec converter.
fn manifest_path(relative: &str) -> PathBuf {
    let root = crate_dir().join("../..");
    if relative.starts_with("gantry-json/") {
        root.join("sample_lots/plugins/rig-formats").join(relative)
    } else {
        root.join("plugins/rig-formats").join(relative)
    }
}

fn manifest(relative: &str) -> (RigFormatManifest, PathBuf) {
    let path = manifest_path(relative);
    let text = std::fs::read_to_string(&path).unwrap();
    match Manifest::from_yaml(relative, &text).unwrap() {
        Manifest::RigFormat(m) => (*m, path),
        other => panic!("{relative} is not a rig format: {other:?}"),
    }
}

const LAYOUTS: [&str; 4] = ["native.yaml", "korvel-tab.yaml", "ostrel-semi.yaml", "pellam-fixed.yaml"];

fn all_formats() -> FormatSet {
    let mut formats = Vec::new();
    for file in LAYOUTS.iter().chain(["gantry-json/gantry-json.yaml"].iter()) {
        let (m, path) = manifest(file);
        formats.push(RigFormat::from_manifest(m, Some(&path)).unwrap());
    }
    formats.push(RigFormat::native_decay());
    FormatSet::new(formats).unwrap()
}

#[test]
fn a_free_decay_round_trips_through_the_native_decay_layout_without_strokes() {
    let (m, _) = manifest("native-decay.yaml");
    assert_eq!(m.record, RecordKind::FreeDecay);
    let record = DecayModel { sample_rate_hz: 2000.0, duration_s: 2.0, ..DecayModel::linear(300.0, 1.0e-3) }
        .simulate(3)
        .unwrap();
    let mut meta = metadata();
    meta.push(("record", "free-decay".into()));
    meta.push(("inertia_kgm2", "0.001".into()));
    let bytes = write_decay_layout(&m, &WriteStyle::for_format(&m.name), &meta, &record).unwrap();
    let text = String::from_utf8(bytes.clone()).unwrap();
    assert!(text.contains("# record:free-decay\n") && text.contains("\ntime_s,angle_deg\n"), "{text}");
    let export = read(&all_formats(), "swing.csv", &bytes).unwrap();
    assert_eq!((export.rig_format.as_str(), export.kind), ("native-decay", RecordKind::FreeDecay));
    // Never split into strokes: the frame holds no stroke, cycle or torque column.
    let names: Vec<String> = export.frame.get_column_names().iter().map(|n| n.to_string()).collect();
    assert_eq!(names, ["test_id", "point", "time_s", "angle_deg"]);
    let back = export.decay().unwrap();
    assert_eq!(back.time_s.len(), record.time_s.len());
    for k in 0..back.time_s.len() {
        // Written with 6 decimals of seconds and 3 of degrees (0.5 µs is below 2 kHz's 500 µs step).
        assert!((back.time_s[k] - record.time_s[k]).abs() <= 0.5e-6 + 1e-12, "time {k}");
        assert!((back.angle_deg[k] - record.angle_deg[k]).abs() <= 0.5e-3 + 1e-9, "angle {k}");
    }
    assert_eq!(export.metadata.inertia_kgm2(), Ok(Some(1.0e-3)));
    assert!(export.curve().is_err(), "a free decay has no torque curve");
}

#[test]
fn a_free_decay_whose_time_does_not_rise_is_refused_with_the_row() {
    let swing = "# record: free-decay\ntime_s,angle_deg\n0.000,1\n0.010,2\n0.010,3\n0.020,4\n";
    let err = read(&all_formats(), "swing.csv", swing.as_bytes()).unwrap_err();
    assert_eq!(err.kind, RejectKind::Unusable, "{err}");
    assert_eq!(err.rig_format.as_deref(), Some("native-decay"));
    assert!(err.message.contains("data row 3") && err.message.contains("rising time"), "{err}");
    let no_angle = "# record: free-decay\ntime_s,angle\n0,1\n";
    let err = read(&all_formats(), "swing.csv", no_angle.as_bytes()).unwrap_err();
    assert_eq!(err.kind, RejectKind::Unrecognised, "no `angle_deg` in the head: {err}");
}

fn sample_curve(seed: u64) -> CurveData {
    let mut model = SpringModel::new(4.2, 3.5, 90.0);
    model.pre_cycles = 1;
    model.points_per_stroke = 120;
    model.simulate(&mut ChaCha8Rng::seed_from_u64(seed))
}

fn metadata() -> Vec<(&'static str, String)> {
    vec![
        ("serial", "S-0042".into()),
        ("part", "TS-2210".into()),
        ("lot", "L-77".into()),
        ("rig", "RIG-A".into()),
        ("operator", "Jörg Brandt".into()),
        ("started", "2026-12-01T14:03".into()),
    ]
}

fn read(
    formats: &FormatSet,
    name: &str,
    bytes: &[u8],
) -> Result<twistlot_ingest::Export, twistlot_ingest::IngestError> {
    read_bytes(name, Path::new(name), bytes, formats, None)
}

fn share_equal(a: &[Stroke], b: &[Stroke]) -> f64 {
    a.iter().zip(b).filter(|(x, y)| x == y).count() as f64 / a.len() as f64
}

#[test]
fn every_layout_round_trips_within_its_printed_precision() {
    let formats = all_formats();
    for (i, file) in LAYOUTS.iter().enumerate() {
        let (m, _) = manifest(file);
        let style = WriteStyle::for_format(&m.name);
        let curve = sample_curve(i as u64);
        let bytes = write_layout(&m, &style, &metadata(), &curve).unwrap();
        let name = format!("export.{}", m.detect.extensions.first().map(String::as_str).unwrap_or("csv"));
        let export = read(&formats, &name, &bytes).unwrap_or_else(|e| panic!("{file}: {e}"));
        assert_eq!(export.rig_format, m.name, "{file} detected as {}", export.rig_format);
        let back = export.curve().unwrap();
        assert_eq!(back.len(), curve.len(), "{file}");
        let (angle_res, torque_res) = printed_resolution(&m, &style).unwrap();
        for k in 0..curve.len() {
            assert!(
                (back.angle_deg[k] - curve.angle_deg[k]).abs() <= angle_res / 2.0 + 1e-9,
                "{file} angle {k}"
            );
            assert!(
                (back.torque_nmm[k] - curve.torque_nmm[k]).abs() <= torque_res / 2.0 + 1e-9,
                "{file} torque {k}"
            );
        }
        // Strokes read from a column match exactly; derived ones may differ only in the dwell.
        assert!(share_equal(&back.stroke, &curve.stroke) > 0.97, "{file}: strokes differ");
        assert_eq!(back.cycles(), 2, "{file}");
        let meta = &export.metadata;
        assert_eq!(meta.serial.as_deref(), Some("S-0042"), "{file}");
        assert_eq!(meta.lot.as_deref(), Some("L-77"), "{file}");
        assert_eq!(meta.operator.as_deref(), Some("Jörg Brandt"), "{file}");
        assert_eq!(meta.content_hash.len(), 64);
        if m.name != "ostrel-semi" {
            assert!(back.time_s.is_some(), "{file} lost its time column");
        }
    }
}

#[test]
fn layouts_really_differ_in_bytes() {
    let curve = sample_curve(1);
    let written: Vec<Vec<u8>> = LAYOUTS
        .iter()
        .map(|f| {
            let (m, _) = manifest(f);
            write_layout(&m, &WriteStyle::for_format(&m.name), &metadata(), &curve).unwrap()
        })
        .collect();
    let korvel = &written[1];
    assert!(korvel.windows(2).any(|w| w == b"\r\n"), "korvel writes CRLF");
    assert!(korvel.contains(&0xFC), "korvel is Windows-1252 (ü as one byte)");
    assert!(korvel.contains(&b'\t'));
    let ostrel = &written[2];
    assert!(ostrel.starts_with(b"\xEF\xBB\xBF"), "ostrel starts with a BOM");
    assert!(String::from_utf8_lossy(ostrel).contains("lbf·in"));
    let pellam = String::from_utf8_lossy(&written[3]).to_string();
    assert!(pellam.contains("N·cm") && !pellam.contains("angle"), "pellam has no header row");
}

#[test]
fn the_exec_converter_round_trips() {
    if std::process::Command::new("python3").arg("--version").output().is_err() {
        panic!("python3 is needed for the shipped exec example");
    }
    let formats = all_formats();
    let curve = sample_curve(9);
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("part.tqj");
    std::fs::write(&path, write_gantry_json(&metadata(), &curve)).unwrap();
    let export = twistlot_ingest::read_path(&path, &formats, None).unwrap();
    assert_eq!(export.rig_format, "gantry-json");
    let back = export.curve().unwrap();
    assert_eq!(back.len(), curve.len());
    for k in 0..curve.len() {
        // JSON keeps 6 decimals of radians and 7 of N·m; the converter prints 4 decimals.
        assert!((back.angle_deg[k] - curve.angle_deg[k]).abs() < 1e-4 + 3e-5, "angle {k}");
        assert!((back.torque_nmm[k] - curve.torque_nmm[k]).abs() < 1e-4 + 1e-4, "torque {k}");
    }
    assert_eq!(export.metadata.serial.as_deref(), Some("S-0042"));
}

#[test]
fn a_failing_converter_is_named() {
    let formats = all_formats();
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("x.tqj");
    std::fs::write(&path, br#"{"format": "gantry-tq/9"}"#).unwrap();
    let err = twistlot_ingest::read_path(&path, &formats, None).unwrap_err();
    assert_eq!(err.kind, RejectKind::Converter);
    assert_eq!(err.rig_format.as_deref(), Some("gantry-json"));
    assert!(err.message.contains("not a gantry-tq/1 document"), "{err}");
}

#[test]
fn a_slow_converter_is_stopped_at_its_limit() {
    let dir = tempfile::tempdir().unwrap();
    let manifest_text = "name: sleepy\nkind: rig-format\napi: 1\ndescription: sleeps\ndetect: { extensions: [zz], contains: [] }\nexec:\n  command: [sleep, \"5\"]\n  timeout_s: 0.3\n  protocol: 1\n";
    let manifest_path = dir.path().join("sleepy.yaml");
    std::fs::write(&manifest_path, manifest_text).unwrap();
    let Manifest::RigFormat(m) = Manifest::from_yaml("sleepy.yaml", manifest_text).unwrap() else { panic!() };
    let formats = FormatSet::new(vec![RigFormat::from_manifest(*m, Some(&manifest_path)).unwrap()]).unwrap();
    let started = std::time::Instant::now();
    let err = read(&formats, "a.zz", b"whatever\n").unwrap_err();
    assert_eq!(err.kind, RejectKind::Converter);
    assert!(err.message.contains("0.3 s") && err.message.contains("stopped"), "{err}");
    assert!(started.elapsed().as_secs_f64() < 4.0, "the converter was not stopped");
}

fn native(text: &str) -> Result<twistlot_ingest::Export, twistlot_ingest::IngestError> {
    read(&all_formats(), "t.csv", text.as_bytes())
}

#[test]
fn bad_inputs_each_get_their_own_reason() {
    let cases: Vec<(&str, &[u8], RejectKind, Option<usize>)> = vec![
        ("empty", b"", RejectKind::Empty, None),
        ("header only", b"# serial: 1\nangle_deg,torque_nmm\n", RejectKind::NoData, Some(2)),
        ("non-numeric", b"angle_deg,torque_nmm\n0,0\n1,2x\n", RejectKind::NotANumber, Some(3)),
        ("nan", b"angle_deg,torque_nmm\n0,0\n1,NaN\n", RejectKind::NotFinite, Some(3)),
        ("infinity", b"angle_deg,torque_nmm\n0,inf\n", RejectKind::NotFinite, Some(2)),
        ("truncated last line", b"angle_deg,torque_nmm\n0,0\n1,", RejectKind::Truncated, Some(3)),
        ("truncated, no comma", b"angle_deg,torque_nmm\n0,0\n1", RejectKind::Truncated, Some(3)),
        ("binary junk", b"\x00\x01\x02\x03angle_deg torque_nmm\x00\xff\xfe", RejectKind::Binary, None),
        ("not recognised", b"Winkel;Moment\n1;2\n", RejectKind::Unrecognised, None),
    ];
    for (label, bytes, kind, line) in cases {
        let err = read(&all_formats(), "t.csv", bytes).unwrap_err();
        assert_eq!(err.kind, kind, "{label}: {err}");
        assert_eq!(err.line, line, "{label}: {err}");
        assert!(err.to_string().starts_with("t.csv"), "{label}: {err}");
    }
}

#[test]
fn a_missing_torque_column_is_named() {
    let (m, path) = manifest("korvel-tab.yaml");
    let formats = FormatSet::new(vec![RigFormat::from_manifest(m, Some(&path)).unwrap()]).unwrap();
    let text = "KORVEL DEMO-BENCH\r\nPrüfling=1\r\n*DATA*\r\nt [ms]\tWinkel [°]\tKraft [N]\r\n0\t0\t0\r\n";
    let bytes = encoding_rs::WINDOWS_1252.encode(text).0;
    let err = read(&formats, "a.txt", &bytes).unwrap_err();
    assert_eq!(err.kind, RejectKind::MissingColumn);
    assert_eq!(err.line, Some(4));
    assert_eq!(err.column.as_deref(), Some("Moment"));
    assert!(err.message.contains("Kraft [N]"), "lists what it found: {err}");
}

#[test]
fn unknown_units_in_a_header_are_named() {
    let (m, path) = manifest("korvel-tab.yaml");
    let formats = FormatSet::new(vec![RigFormat::from_manifest(m, Some(&path)).unwrap()]).unwrap();
    let text = "KORVEL DEMO-BENCH\r\n*DATA*\r\nt [ms]\tWinkel [°]\tMoment [kp·dm]\r\n0\t0\t0\r\n";
    let bytes = encoding_rs::WINDOWS_1252.encode(text).0;
    let err = read(&formats, "a.txt", &bytes).unwrap_err();
    assert_eq!(err.kind, RejectKind::UnknownUnit);
    assert_eq!(err.line, Some(3));
    assert!(err.message.contains("kp·dm"), "{err}");
}

#[test]
fn decimal_comma_errors_name_the_separator() {
    let (m, path) = manifest("ostrel-semi.yaml");
    let formats = FormatSet::new(vec![RigFormat::from_manifest(m, Some(&path)).unwrap()]).unwrap();
    let text =
        "OSTREL DEMO-SEMI\n\"Serial No.\";\"7\"\n[curve]\nAngle (deg);Torque (lbf·in);Dir\n0,0;0,0;+\n1,0;12,5x;+\n";
    let err = read(&formats, "b.csv", text.as_bytes()).unwrap_err();
    assert_eq!(err.kind, RejectKind::NotANumber);
    assert_eq!(err.line, Some(6));
    assert_eq!(err.column.as_deref(), Some("Torque (lbf·in)"));
    assert_eq!(
        err.to_string(),
        "b.csv, line 6, column `Torque (lbf·in)`: `12,5x` is not a number (decimal separator `,`) (rig format `ostrel-semi`)"
    );
}

#[test]
fn a_bad_stroke_label_is_named() {
    let (m, path) = manifest("ostrel-semi.yaml");
    let formats = FormatSet::new(vec![RigFormat::from_manifest(m, Some(&path)).unwrap()]).unwrap();
    let text = "OSTREL DEMO-SEMI\n[curve]\nAngle (deg);Torque (lbf·in);Dir\n0,0;0,0;up\n";
    let err = read(&formats, "b.csv", text.as_bytes()).unwrap_err();
    assert_eq!(err.kind, RejectKind::BadLabel);
    assert!(err.message.contains("`up`"), "{err}");
}

#[test]
fn two_plugins_claiming_a_file_are_both_named() {
    let (mut twin, _) = manifest("native.yaml");
    twin.name = "native-copy".into();
    let formats =
        FormatSet::new(vec![RigFormat::native(), RigFormat::from_manifest(twin, None).unwrap()]).unwrap();
    let err = read(&formats, "t.csv", b"angle_deg,torque_nmm\n0,0\n").unwrap_err();
    assert_eq!(err.kind, RejectKind::Ambiguous);
    assert!(err.message.contains("`native`") && err.message.contains("`native-copy`"), "{err}");
    // Naming the format settles it.
    let export =
        read_bytes("t.csv", Path::new("t.csv"), b"angle_deg,torque_nmm\n0,0\n", &formats, Some("native"))
            .unwrap();
    assert_eq!(export.rig_format, "native");
}

#[test]
fn crlf_bom_and_extra_columns_are_fine_in_native() {
    let export = native(
        "\u{feff}# serial: A1\r\n# fixture: F-2\r\nangle_deg,torque_nmm,extra\r\n0,0,x\r\n10,20,y\r\n",
    )
    .unwrap();
    assert_eq!(export.points(), 2);
    assert_eq!(export.metadata.extra.get("fixture").map(String::as_str), Some("F-2"));
    let frame = &export.frame;
    let names: Vec<&str> = frame.get_column_names().iter().map(|s| s.as_str()).collect();
    assert_eq!(names, ["test_id", "point", "angle_deg", "torque_nmm", "stroke", "cycle"]);
}
