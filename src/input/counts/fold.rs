//! The overlap rule and day folding: a checked row joins its station-day unless an earlier
//! row already covers part of its span.

use super::*;

/// Directions whose records a record of direction `d` must not overlap.
pub(super) fn conflicting(d: Direction) -> &'static [Direction] {
    match d {
        Direction::Fwd => &[Direction::Fwd, Direction::Both],
        Direction::Rev => &[Direction::Rev, Direction::Both],
        Direction::Both => &Direction::ALL,
    }
}

pub(super) fn fold(
    store: &mut CountStore,
    stations: &StationList,
    row: &CountRow,
) -> Result<(), Fault> {
    let date = row.stamp.local.date();
    let days = &mut store.days[row.station];
    match days.entry(date) {
        std::collections::btree_map::Entry::Occupied(mut e) => fold_into(e.get_mut(), row)?,
        std::collections::btree_map::Entry::Vacant(e) => {
            // A day is only created by a row that lands in it, so no day is ever empty.
            let mut fresh = DayCounts::new(row.station, date, row.stamp.offset_min);
            fold_into(&mut fresh, row)?;
            e.insert(fresh);
        }
    }
    count_year(store, stations, row);
    Ok(())
}

pub(super) fn count_year(store: &mut CountStore, stations: &StationList, row: &CountRow) {
    let kind = stations.stations[row.station].kind;
    *store
        .records_by_year
        .entry((row.stamp.local.date().year(), kind))
        .or_insert(0) += 1;
}

pub(super) fn fold_into(day: &mut DayCounts, row: &CountRow) -> Result<(), Fault> {
    let rel = row.stamp.utc_minutes() - day.anchor_utc_min;
    let n = (row.minutes / 15) as usize;
    if rel < 0 || rel % 15 != 0 || rel as usize / 15 + n > MAX_DAY_QUARTERS {
        return Err((
            "start",
            String::new(),
            "UTC offset does not fit the other records of this local day".into(),
        ));
    }
    let q = rel as usize / 15;
    let mask = ((1u128 << n) - 1) << q;
    for d in conflicting(row.direction) {
        if day.dir(*d).is_some_and(|dd| dd.covered & mask != 0) {
            return Err((
                "start",
                String::new(),
                format!(
                    "overlaps a record read earlier for this station ({} {})",
                    d.as_str(),
                    if *d == row.direction {
                        "same direction"
                    } else {
                        "direction"
                    }
                ),
            ));
        }
    }
    if q < day.earliest.0 {
        day.earliest = (q, row.stamp.offset_min);
    }
    if q >= day.latest.0 {
        day.latest = (q, row.stamp.offset_min);
    }
    let dd: &mut DirectionDay =
        day.dirs[row.direction.index()].get_or_insert_with(Default::default);
    let h = q / 4;
    dd.covered |= mask;
    dd.records += 1;
    if n == 1 {
        dd.fine_quarters |= mask;
    }
    if let Some(v) = row.vehicles {
        dd.vehicle_quarters |= mask;
        dd.vehicles[h] = dd.vehicles[h].saturating_add(v);
        if n == 1 {
            dd.peak_quarter[h] = dd.peak_quarter[h].max(v);
        }
    }
    if let Some(a) = row.axles {
        dd.axle_quarters |= mask;
        dd.axles[h] = dd.axles[h].saturating_add(a);
        if let Some(v) = row.vehicles {
            dd.vehicles_with_axles += v as u64;
            dd.axles_with_vehicles += a as u64;
        }
    }
    if let Some(c) = row.classes {
        dd.class_quarters |= mask;
        for (k, v) in c.iter().enumerate() {
            dd.classes[k] += *v as u64;
        }
        let heavy: u32 = c[3..].iter().fold(0u32, |a, &b| a.saturating_add(b));
        dd.heavy[h] = dd.heavy[h].saturating_add(heavy);
    }
    Ok(())
}
