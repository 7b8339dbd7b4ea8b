//! An hourly weather series as the batch run's ambient air, from a start time on (interpolated between hours).

use chrono::{DateTime, Duration, FixedOffset, Timelike};

use super::run::{Ambient, AmbientSample};
use crate::weather::series::WeatherSeries;

/// Weather from `start` on.
pub struct SeriesAmbient<'a> {
    /// The record.
    pub series: &'a WeatherSeries,
    /// The run's start, in the site's time.
    pub start: DateTime<FixedOffset>,
}

impl Ambient for SeriesAmbient<'_> {
    fn at(&self, elapsed_s: f64) -> Option<AmbientSample> {
        let t = self.start + Duration::milliseconds((elapsed_s * 1000.0).round() as i64);
        let air = self.series.air_at(t).ok()?;
        let local = t.with_timezone(&self.series.site().utc_offset);
        Some(AmbientSample {
            air,
            local_hour: local.hour(),
        })
    }
}
