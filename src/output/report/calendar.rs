//! The QC calendar: one row per permanent counter, one column per day of the study year,
//! each day coloured by how quality control treated it. Runs of equal days are drawn as one
//! rectangle, so a year of mostly accepted days costs a few elements per counter.

use maud::{html, Markup};

use super::data::{CalendarRow, DayStatus};
use super::svg::{c, swatch};

/// Colours and legend words per status, in [`DayStatus`] order.
const STATUS: [(DayStatus, &str, &str); 4] = [
    (DayStatus::Missing, "#e8e8e8", "no record"),
    (DayStatus::Accepted, "#74c476", "accepted"),
    (DayStatus::Flagged, "#fd8d3c", "accepted with a flag"),
    (DayStatus::Rejected, "#cb181d", "rejected"),
];

/// Month starts of a year as day-of-year indices (0-based) and short names.
fn month_starts(leap: bool) -> [(usize, &'static str); 12] {
    let len = [
        31,
        if leap { 29 } else { 28 },
        31,
        30,
        31,
        30,
        31,
        31,
        30,
        31,
        30,
        31,
    ];
    let names = [
        "Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec",
    ];
    let mut out = [(0, ""); 12];
    let mut d = 0;
    for m in 0..12 {
        out[m] = (d, names[m]);
        d += len[m];
    }
    out
}

/// Day `d` (0-based) of `year` as `12 Mar`.
fn day_name(year: i32, d: usize) -> String {
    chrono::NaiveDate::from_yo_opt(year, d as u32 + 1).map_or_else(
        || format!("day {}", d + 1),
        |t| t.format("%-d %b").to_string(),
    )
}

/// Runs of equal status: (first day, length, status).
fn runs(days: &[DayStatus]) -> Vec<(usize, usize, DayStatus)> {
    let mut out: Vec<(usize, usize, DayStatus)> = Vec::new();
    for (i, &s) in days.iter().enumerate() {
        match out.last_mut() {
            Some(r) if r.2 == s => r.1 += 1,
            _ => out.push((i, 1, s)),
        }
    }
    out
}

fn colour(s: DayStatus) -> &'static str {
    STATUS.iter().find(|x| x.0 == s).map_or("#fff", |x| x.1)
}

fn word(s: DayStatus) -> &'static str {
    STATUS.iter().find(|x| x.0 == s).map_or("", |x| x.2)
}

/// The calendar of `rows` for `year`, with its legend.
pub fn qc_calendar(rows: &[CalendarRow], year: i32) -> Markup {
    if rows.is_empty() {
        return html! { p.note { "No permanent counter has records in the study year." } };
    }
    let ndays = rows.iter().map(|r| r.days.len()).max().unwrap_or(365);
    let (left, top, day_w, row_h) = (70.0, 16.0, 2.0, 9.0);
    let w = left + day_w * ndays as f64 + 6.0;
    let h = top + row_h * rows.len() as f64 + 4.0;
    let x = |d: usize| left + day_w * d as f64;
    let title = format!(
        "Quality control per permanent counter and day of {year}: accepted, flagged, rejected or no record"
    );
    html! {
        figure.calendar {
            figcaption.title { (title) }
            p.key {
                @for (_, col, name) in STATUS {
                    span.key { (swatch(col, 8.0, 1.0, false)) (name) }
                }
                " A day is shown by its worse direction (a day rejected in one direction is red)."
            }
            svg.chart.calendar viewBox=(format!("0 0 {} {}", c(w), c(h))) role="img" aria-label=(title) {
                @for (d, name) in month_starts(ndays > 365) {
                    line.axis x1=(c(x(d))) y1=(c(top - 4.0)) x2=(c(x(d))) y2=(c(h - 4.0)) stroke-opacity="0.35" {}
                    text.tick x=(c(x(d) + 2.0)) y=(c(top - 6.0)) { (name) }
                }
                @for (i, r) in rows.iter().enumerate() {
                    @let yt = top + row_h * i as f64;
                    text.tick x=(c(left - 4.0)) y=(c(yt + 7.0)) text-anchor="end" { (r.station) }
                    @for (d0, n, s) in runs(&r.days) {
                        // Tooltips on the exceptions only: a title per accepted run would
                        // double the calendar's size and tell nothing the colour does not.
                        rect x=(c(x(d0))) y=(c(yt + 0.5)) width=(c(day_w * n as f64)) height=(c(row_h - 1.0)) fill=(colour(s)) {
                            @if s != DayStatus::Accepted {
                                title { (r.station) " " (day_name(year, d0)) @if n > 1 { " to " (day_name(year, d0 + n - 1)) } ": " (word(s)) }
                            }
                        }
                    }
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn equal_days_make_one_run() {
        use DayStatus::*;
        let r = runs(&[Accepted, Accepted, Rejected, Accepted, Missing, Missing]);
        assert_eq!(
            r,
            vec![
                (0, 2, Accepted),
                (2, 1, Rejected),
                (3, 1, Accepted),
                (4, 2, Missing)
            ]
        );
        // ISO calendar: March 1 is day 59 (0-based) in a common year, 60 in a leap year.
        assert_eq!(month_starts(false)[2].0, 59);
        assert_eq!(month_starts(true)[2].0, 60);
        let html = qc_calendar(
            &[CalendarRow {
                station: "CC1".into(),
                days: vec![Accepted; 365],
            }],
            2025,
        )
        .into_string();
        assert_eq!(html.matches("<rect").count(), 1);
        assert_eq!(day_name(2025, 59), "1 Mar");
        let html = qc_calendar(
            &[CalendarRow {
                station: "CC1".into(),
                days: vec![Accepted, Rejected, Rejected],
            }],
            2025,
        )
        .into_string();
        assert!(html.contains("CC1 2 Jan to 3 Jan: rejected"), "{html}");
    }
}
