//! Thresholds of the count quality rules and network checks: the `[qc]` table of study.toml.
//!
//! Every field has a default; the doc comment of each field gives its meaning, unit, default
//! and where the default comes from. "Common practice" marks a value that no single published
//! source fixes and that agencies commonly start from.

/// Thresholds of the count quality rules and the network checks.
///
/// ```
/// let p: roadtally::qc::QcParams = toml::from_str("daily_deviation_max_share = 0.25").unwrap();
/// assert!((p.daily_deviation_max_share - 0.25).abs() < 1e-12);
/// assert!((p.min_coverage - 1.0).abs() < 1e-12);
/// ```
#[derive(Debug, Clone, serde::Deserialize, serde::Serialize)]
#[serde(default, deny_unknown_fields)]
pub struct QcParams {
    /// Share (0..1) of the local day's quarter-hours that must be covered for the day to be
    /// complete. Below it the direction-day is `incomplete` and rejected. Default 1.0: FHWA TMG
    /// (ch. 3) and the AASHTO AADT method average complete 24-hour days only; days of 23 and 25
    /// hours (clock changes) are complete when all their hours are covered.
    pub min_coverage: f64,

    /// Fewest days of one weekday (for one station and direction) needed to build a profile of
    /// that weekday; with fewer, the weekday group (Mon-Fri, Sat, Sun) and then all days of the
    /// station are pooled. Days. Default 5 (common practice: a robust median needs a handful).
    pub profile_min_days: usize,
    /// Fewest complete days of a station and direction for any profile at all (all working days
    /// or all weekend days pooled). With fewer, only the self-contained rules run. Days.
    /// Default 3 (the median of 3 still ignores one faulty day).
    pub profile_min_days_pooled: usize,

    /// Shortest flat run, in hours, that can be a fault at all. Default 3 (common practice).
    pub flat_run_min_hours: usize,
    /// Smallest repeated hourly value counted in a flat run, vehicles (or axles) per hour.
    /// Default 1: a run of zeros is the zero-run rule's business.
    pub flat_run_min_value: u32,
    /// A flat run is rejected when the chance of that many equal consecutive hourly counts under
    /// Poisson counting noise (at the run's value or the typical volume, whichever is higher)
    /// is below this probability. Default 3e-5 (volume-aware: at 100 veh/h four equal hours
    /// fire, at 3 veh/h it takes seven; common practice is a fixed 4-6 hours).
    pub flat_run_max_probability: f64,

    /// A run of zero hours is rejected when the volume expected over the run is at least this,
    /// vehicles (Poisson chance of a zero run then below e^-20). Default 20.
    pub zero_run_min_expected: f64,
    /// Share of the typical hourly volume taken as the expected volume in the zero-run test,
    /// to allow for low days (holidays, bad weather). Default 0.5 (common practice).
    pub zero_run_level_floor: f64,

    /// Smallest ratio of an hour's count to its expected count for a spike. Default 3.0
    /// (injected or real spikes of concern are x5 and more; normal peaks stay under x2).
    pub spike_min_ratio: f64,
    /// Smallest standardised excess (observed - expected) / standard deviation for a spike,
    /// where the deviation combines Poisson noise, the profile's robust spread (MAD) and
    /// `shape_noise_share`. Default 6 (common practice for robust z-scores).
    pub spike_min_z: f64,
    /// Smallest excess over the expected hourly count for a spike, vehicles per hour.
    /// Default 8 (keeps low-volume night hours from firing).
    pub spike_min_excess: f64,

    /// Smallest change of level within the day, as |ln(after / before)| of the observed-to-
    /// typical ratios before and after the break hour. Default 0.25 (a step of about 28 %).
    pub level_shift_min_log_ratio: f64,
    /// Smallest standardised size of that change (Poisson, profile and shape noise). Default 4
    /// (with about 20 possible break hours a day, still well under 1 false step in 1000 days).
    pub level_shift_min_z: f64,
    /// Holidays of the study's calendar (see [`super::calendar`]): rule names such as
    /// `thanksgiving`, `MM-DD` for a fixed-date holiday, `YYYY-MM-DD` for one date. On these
    /// days and the travel days around them level steps within the day are flagged, never
    /// rejected. Default: the US federal holidays.
    pub holidays: Vec<String>,
    /// Days either side of New Year, Independence Day, Thanksgiving and Christmas that count
    /// as travel days. Default 1.
    pub holiday_margin_days: u32,
    /// Distance within which permanent counters stepping the same way on the same date at
    /// about the same hour (±3 h) make a level step area-wide traffic (a storm, snow, an
    /// area-wide event), flagged rather than rejected, km. Default 30 (project choice: the
    /// reach of a weather front over a few hours; sensor faults do not coincide).
    pub area_step_km: f64,
    /// Other permanent counters within `area_step_km` that must step the same way for that.
    /// Default 2 (project choice: two independent faults in the same hour of the same day
    /// nearby are far rarer than weather).
    pub area_step_min_stations: usize,

    /// Smallest typical volume on each side of the break, vehicles. Default 50.
    pub level_shift_min_side_volume: f64,
    /// Fewest hours on each side of the break, hours. Default 5: real evenings, nights and
    /// early mornings depart from a median profile for one to four hours (measured on a real
    /// freeway counter, where breaks that close to midnight were 94 % of false steps).
    pub level_shift_min_side_hours: usize,
    /// A step rejects its day only when the side that departs from the typical level holds at
    /// least this share of the day's typical volume, or carries on into the neighbouring day;
    /// otherwise it is flagged (an event evening, an incident, a storm). Share 0..1. Default
    /// 0.4 (common practice: "most of the day" at the volume-weighted level).
    pub level_shift_min_off_share: f64,
    /// A spike in the first or last hour of the day must be at least this many times the hour
    /// next to it across midnight. Default 1.5 (a decline through midnight stays under 1).
    pub spike_min_neighbour_ratio: f64,

    /// Relative noise of an hour around the day's typical shape beyond Poisson noise, share of
    /// the expected volume. Default 0.03 (common practice; the profile's own MAD is used where
    /// it is larger).
    pub shape_noise_share: f64,

    /// A day's total deviating from the typical total of that day type by more than this share
    /// is flagged (`daily_deviation`). Default 0.20 (common practice starting point; TMG
    /// data-quality checks compare against the station's history).
    pub daily_deviation_max_share: f64,
    /// The typical total is scaled to the seasonal level: the median observed-to-typical ratio
    /// of the station's days within this many days either side (needs `profile_min_days` of
    /// them; 0 compares against the whole-period profile). Days. Default 14 (common practice:
    /// compare with the same weekday in the surrounding weeks).
    pub daily_deviation_window_days: u32,

    /// Largest change of the fwd share of the two-way daily total against the station's
    /// typical fwd share, absolute share. Beyond it the day is flagged. Default 0.10.
    pub directional_max_share_change: f64,
    /// Without a typical fwd share: the heavier direction's share of the two-way daily total
    /// above which the day is flagged. Default 0.70 (common practice; two-way daily splits are
    /// close to 50/50).
    pub directional_max_share: f64,
    /// Swapped directions: the chi-square misfit of the day with directions as recorded must
    /// exceed the misfit with fwd and rev exchanged by this factor. Default 3.
    pub swap_min_misfit_ratio: f64,
    /// ... and by at least this much (chi-square units over the day's hours of both
    /// directions). Default 60.
    pub swap_min_misfit_gain: f64,

    /// Smallest share of classes 1-3 (light vehicles) in a classified day. Below it the class
    /// mix is implausible and the day flagged. Default 0.20 (common practice; even freight
    /// corridors carry a majority of light vehicles).
    pub class_min_light_share: f64,
    /// Largest change of the heavy share (classes 4-13) against the station's typical heavy
    /// share, absolute share. Default 0.10.
    pub class_max_heavy_share_change: f64,

    /// Short counts: fewest consecutive fully covered hours of a day for the short-count
    /// rules against the permanent counters' reference (partial first and last days with at
    /// least this many hours are tested too). Hours. Default 8 (common practice: a third of
    /// a day shows a peak and its shoulders).
    pub short_min_hours: usize,
    /// Short counts: fewest permanent counters of the segment's broad functional group and
    /// area before the reference widens to the broad group, then to all counters. Default 2.
    pub short_reference_min_stations: usize,
    /// Short counts: hour-to-hour misfit of a road's shape against another road's (the
    /// reference counter's), share of the expected volume, in place of `shape_noise_share`.
    /// Default 0.10 (common practice; hourly shares of roads of one pattern differ by about
    /// a tenth at the peaks).
    pub short_shape_noise_share: f64,
    /// Short counts: smallest standardised level step against the reference, in place of
    /// `level_shift_min_z`. Default 3 (a count has 1-3 days, not a year, to go wrong on).
    pub short_level_shift_min_z: f64,
    /// Short counts: smallest level step against the reference, |ln(after / before)|, in
    /// place of `level_shift_min_log_ratio`. Default 0.35 (a step of about 40 %: another
    /// road's profile is a looser reference than a counter's own).
    pub short_level_shift_min_log_ratio: f64,
    /// Short counts: smallest standardised level step of a day against the count's own other
    /// days of its kind for a flag when the reference shows none. Default 2.5 (a flag only:
    /// with two days either may be the odd one).
    pub short_own_days_min_z: f64,
    /// Short counts: a day (complete or partial) whose total over its hours differs from the
    /// mean of the count's other days of its kind (working or weekend) at the same clock
    /// hours by more than this share, and by three Poisson standard deviations, is flagged
    /// (`count_days`). Default 0.30 (common practice; consecutive working days of one road
    /// differ by well under a fifth).
    pub short_day_max_change: f64,
    /// Short counts: the count's mean two-way day beyond this ratio of the segment's latest
    /// published AADT, either way, flags its days (`history_level`). Default 2.0 (loose:
    /// season, weekday and growth stay in; recreational roads reach 1.8 x AADT in summer).
    pub short_history_max_ratio: f64,

    /// Segments shorter than this are reported as zero-length-like, km. Default 0.005 (5 m).
    pub min_segment_km: f64,
    /// Segments longer than this are reported as implausibly long, km. Default 100.
    pub max_segment_km: f64,
    /// A segment may be shorter than its chord (the straight line between its nodes) by at
    /// most this share before it is reported. Default 0.02 (digitising and rounding).
    pub chord_tolerance_share: f64,
    /// ... and by at most this much in km. Default 0.05.
    pub chord_tolerance_km: f64,
    /// Segments longer than this many times their chord are reported. Default 5 (mountain
    /// roads reach 2-3).
    pub max_length_to_chord: f64,
    /// Nodes closer than this are reported as coinciding, km. Default 0.001 (1 m).
    pub coincident_node_km: f64,
}

impl Default for QcParams {
    fn default() -> Self {
        QcParams {
            min_coverage: 1.0,
            profile_min_days: 5,
            profile_min_days_pooled: 3,
            flat_run_min_hours: 3,
            flat_run_min_value: 1,
            flat_run_max_probability: 3e-5,
            zero_run_min_expected: 20.0,
            zero_run_level_floor: 0.5,
            spike_min_ratio: 3.0,
            spike_min_z: 6.0,
            spike_min_excess: 8.0,
            level_shift_min_log_ratio: 0.25,
            level_shift_min_z: 4.0,
            level_shift_min_side_volume: 50.0,
            level_shift_min_side_hours: 5,
            holidays: super::calendar::default_holidays(),
            holiday_margin_days: 1,
            area_step_km: 30.0,
            area_step_min_stations: 2,
            level_shift_min_off_share: 0.4,
            spike_min_neighbour_ratio: 1.5,
            shape_noise_share: 0.03,
            daily_deviation_max_share: 0.20,
            daily_deviation_window_days: 14,
            directional_max_share_change: 0.10,
            directional_max_share: 0.70,
            swap_min_misfit_ratio: 3.0,
            swap_min_misfit_gain: 60.0,
            class_min_light_share: 0.20,
            class_max_heavy_share_change: 0.10,
            short_min_hours: 8,
            short_reference_min_stations: 2,
            short_shape_noise_share: 0.10,
            short_level_shift_min_z: 3.0,
            short_level_shift_min_log_ratio: 0.35,
            short_own_days_min_z: 2.5,
            short_day_max_change: 0.30,
            short_history_max_ratio: 2.0,
            min_segment_km: 0.005,
            max_segment_km: 100.0,
            chord_tolerance_share: 0.02,
            chord_tolerance_km: 0.05,
            max_length_to_chord: 5.0,
            coincident_node_km: 0.001,
        }
    }
}
