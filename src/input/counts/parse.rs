//! Checking one count row: its columns, station, time stamp and counts.

use super::*;

/// Column positions of a count file.
pub(super) struct Columns {
    pub(super) station: usize,
    pub(super) direction: usize,
    pub(super) start: usize,
    pub(super) minutes: usize,
    pub(super) vehicles: Option<usize>,
    pub(super) axles: Option<usize>,
    pub(super) classes: [Option<usize>; CLASS_COUNT],
}

pub(super) const CLASS_NAMES: [&str; CLASS_COUNT] = [
    "class_1", "class_2", "class_3", "class_4", "class_5", "class_6", "class_7", "class_8",
    "class_9", "class_10", "class_11", "class_12", "class_13",
];

impl Columns {
    pub(super) fn find(f: &CsvFile) -> Result<Columns, InputError> {
        let cols = Columns {
            station: f.require("station_id")?,
            direction: f.require("direction")?,
            start: f.require("start")?,
            minutes: f.require("minutes")?,
            vehicles: f.optional("vehicles"),
            axles: f.optional("axles"),
            classes: CLASS_NAMES.map(|c| f.optional(c)),
        };
        if cols.vehicles.is_none()
            && cols.axles.is_none()
            && cols.classes.iter().all(Option::is_none)
        {
            return Err(InputError::MissingColumn {
                path: PathBuf::from(&f.name),
                column: "vehicles (or axles, or class_1..class_13)".into(),
            });
        }
        Ok(cols)
    }
}

/// One count row after validation.
pub(super) struct CountRow {
    pub(super) station: usize,
    pub(super) direction: Direction,
    pub(super) stamp: LocalStamp,
    /// The later reading of a clock time the study's zone repeats (fall back).
    pub(super) later: Option<LocalStamp>,
    pub(super) minutes: u32,
    pub(super) vehicles: Option<u32>,
    pub(super) axles: Option<u32>,
    pub(super) classes: Option<[u32; CLASS_COUNT]>,
}

/// Why a row was rejected: column, value, reason.
pub(super) type Fault = (&'static str, String, String);

pub(super) fn fault(col: &'static str, val: &[u8], why: impl Into<String>) -> Fault {
    (col, show(val), why.into())
}

pub(super) fn lookup_station(raw: &[u8], stations: &StationList) -> Result<usize, String> {
    let id = StationId(show(raw));
    if let Some(&i) = stations.index.get(&id) {
        return Ok(i);
    }
    Err(match stations.rejected.get(&id) {
        Some(why) => format!("station was rejected: {why}"),
        None => "unknown station (not in stations.csv)".to_string(),
    })
}

pub(super) fn parse_row(
    rec: &Record,
    cols: &Columns,
    net: &Network,
    stations: &StationList,
    cache: &mut Option<(Vec<u8>, Result<usize, String>)>,
    zone: Option<&chrono_tz::Tz>,
) -> Result<CountRow, Fault> {
    let sid =
        cell(rec, cols.station).ok_or_else(|| fault("station_id", b"", "station_id is empty"))?;
    let station = match cache {
        Some((k, v)) if k.as_slice() == sid => v.clone(),
        _ => {
            let v = lookup_station(sid, stations);
            *cache = Some((sid.to_vec(), v.clone()));
            v
        }
    }
    .map_err(|why| fault("station_id", sid, why))?;
    let dir_raw = rec.get(cols.direction).unwrap_or(b"").trim_ascii();
    let direction = std::str::from_utf8(dir_raw)
        .ok()
        .and_then(Direction::parse)
        .ok_or_else(|| {
            fault(
                "direction",
                dir_raw,
                "direction is not `fwd`, `rev` or `both`",
            )
        })?;
    let seg = &net.segments[stations.stations[station].segment];
    if seg.oneway && direction == Direction::Rev {
        return Err(fault(
            "direction",
            dir_raw,
            "`rev` record on a one-way segment",
        ));
    }
    let start_raw = rec.get(cols.start).unwrap_or(b"").trim_ascii();
    let Start { stamp, later } =
        parse_start(start_raw, zone).map_err(|e| fault("start", start_raw, e.reason()))?;
    let min_raw = rec.get(cols.minutes).unwrap_or(b"").trim_ascii();
    let minutes = match min_raw {
        b"15" => 15,
        b"60" => 60,
        _ => return Err(fault("minutes", min_raw, "minutes is not 15 or 60")),
    };
    if stamp.seconds() != 0 || stamp.local.minute() % minutes != 0 {
        return Err(fault(
            "start",
            start_raw,
            format!("start is not aligned to its {minutes}-minute interval on the local clock"),
        ));
    }
    let count = |c: Option<usize>, name: &'static str| -> Result<Option<u32>, Fault> {
        match c.and_then(|i| cell(rec, i)) {
            None => Ok(None),
            Some(v) => parse_count(v)
                .map(Some)
                .map_err(|e| fault(name, v, e.reason())),
        }
    };
    let vehicles = count(cols.vehicles, "vehicles")?;
    let axles = count(cols.axles, "axles")?;
    let mut classes = [0u32; CLASS_COUNT];
    let mut given = 0;
    let mut first_empty = None;
    for (k, c) in cols.classes.iter().enumerate() {
        match count(*c, CLASS_NAMES[k])? {
            Some(v) => {
                classes[k] = v;
                given += 1;
            }
            None => {
                first_empty.get_or_insert(k);
            }
        }
    }
    let classes = match given {
        0 => None,
        CLASS_COUNT => Some(classes),
        _ => {
            let k = first_empty.expect("some class is empty");
            return Err(fault(
                CLASS_NAMES[k],
                b"",
                format!("class columns partly filled ({given} of 13 given; all or none)"),
            ));
        }
    };
    let vehicles = match (vehicles, classes) {
        (Some(v), Some(c)) => {
            let sum: u64 = c.iter().map(|&x| x as u64).sum();
            if sum != v as u64 {
                return Err(fault(
                    "vehicles",
                    v.to_string().as_bytes(),
                    format!("vehicles differ from the sum of the class columns ({v} vs {sum})"),
                ));
            }
            Some(v)
        }
        (None, Some(c)) => {
            let sum: u64 = c.iter().map(|&x| x as u64).sum();
            Some(
                u32::try_from(sum)
                    .map_err(|_| fault("vehicles", b"", "class sum does not fit in 32 bits"))?,
            )
        }
        (v, None) => v,
    };
    if vehicles.is_none() && axles.is_none() {
        return Err(fault(
            "",
            b"",
            "row gives none of vehicles, axles or class counts",
        ));
    }
    Ok(CountRow {
        station,
        direction,
        stamp,
        later,
        minutes,
        vehicles,
        axles,
        classes,
    })
}
