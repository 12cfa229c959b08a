//! Solar geometry: declination, equation of time, hour angle, zenith, sunrise and sunset, and the
//! extraterrestrial irradiance on a horizontal surface.
//!
//! The position follows the NOAA solar calculator equations (NOAA Global Monitoring Laboratory,
//! after Meeus 1991, *Astronomical Algorithms*): the Sun's mean longitude and anomaly in Julian
//! centuries since J2000, the equation of centre, the apparent longitude and the corrected
//! obliquity give the declination; the equation of time follows from the same terms. The zenith
//! is geometric (no refraction). These terms are good to about 0.01° in declination for
//! 1900–2100, ample for radiation partitioning.
//!
//! The extraterrestrial irradiance uses S0 = 1361 W m⁻² (Kopp & Lean 2011, Geophys. Res. Lett.)
//! scaled by (1 AU / r)², r from the same orbital terms.
//!
//! Times are in the site's local standard time (no daylight saving) as (year, day of year,
//! fractional hour); the site's fixed UTC offset turns them into universal time.

use crate::error::{Result, check_input, check_range};

/// Total solar irradiance at 1 AU (W m⁻²), Kopp & Lean (2011).
pub const SOLAR_CONSTANT_W_M2: f64 = 1361.0;

/// Zenith angle (°) of the Sun's centre at sunrise and sunset: 90° plus 0.833° for refraction at
/// the horizon and the solar semi-diameter, as in the NOAA calculator.
pub const SUNRISE_ZENITH_DEG: f64 = 90.833;

/// Julian day of 2000-01-01 00:00 UT.
const JD_2000_JAN_1: f64 = 2_451_544.5;
/// Julian day of the J2000.0 epoch (2000-01-01 12:00).
const JD_J2000: f64 = 2_451_545.0;

/// A site's position for solar geometry.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Location {
    latitude_deg: f64,
    longitude_deg: f64,
    utc_offset_h: f64,
    /// sin and cos of the latitude, from `latitude_deg` (computed once: every step needs them).
    sin_cos_lat: (f64, f64),
}

/// The Sun's position at one instant, as seen from a [`Location`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolarPosition {
    /// Solar declination (°).
    pub declination_deg: f64,
    /// Equation of time (minutes): apparent minus mean solar time.
    pub equation_of_time_min: f64,
    /// Hour angle (°), 0 at solar noon, negative in the morning, in [−180, 180).
    pub hour_angle_deg: f64,
    /// Cosine of the geometric solar zenith angle (dimensionless); negative below the horizon.
    pub cos_zenith: f64,
    /// Geometric solar zenith angle (°), 0–180.
    pub zenith_deg: f64,
    /// Earth–Sun distance (AU).
    pub earth_sun_distance_au: f64,
}

/// Sunrise and sunset on one day, in the site's local standard time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SunTimes {
    /// The Sun rises and sets on this day.
    RiseAndSet {
        /// Sunrise (fractional hour, local standard time; may be below 0 at sites far from their
        /// time zone's meridian).
        sunrise_hour_lst: f64,
        /// Sunset (fractional hour, local standard time; may exceed 24).
        sunset_hour_lst: f64,
    },
    /// The Sun stays above the sunrise zenith all day.
    PolarDay,
    /// The Sun stays below the sunrise zenith all day.
    PolarNight,
}

/// Terms of the Sun's apparent orbit that do not depend on the observer.
#[derive(Debug, Clone, Copy)]
struct SunTerms {
    declination_rad: f64,
    equation_of_time_min: f64,
    distance_au: f64,
}

impl SunTerms {
    /// NOAA calculator terms at Julian day `jd` (UT).
    fn at(jd: f64) -> Self {
        let t = (jd - JD_J2000) / 36_525.0;
        let mean_long_deg = (280.46646 + t * (36000.76983 + t * 0.0003032)).rem_euclid(360.0);
        let mean_anom_deg = 357.52911 + t * (35999.05029 - 0.0001537 * t);
        let ecc = 0.016708634 - t * (0.000042037 + 0.0000001267 * t);
        let m = mean_anom_deg.to_radians();
        let centre_deg = m.sin() * (1.914602 - t * (0.004817 + 0.000014 * t))
            + (2.0 * m).sin() * (0.019993 - 0.000101 * t)
            + (3.0 * m).sin() * 0.000289;
        let true_long_deg = mean_long_deg + centre_deg;
        let true_anom = (mean_anom_deg + centre_deg).to_radians();
        let distance_au = 1.000001018 * (1.0 - ecc * ecc) / (1.0 + ecc * true_anom.cos());
        // Nutation and aberration, through the longitude of the Moon's ascending node.
        let omega = (125.04 - 1934.136 * t).to_radians();
        let apparent_long = (true_long_deg - 0.00569 - 0.00478 * omega.sin()).to_radians();
        let mean_obliq_deg =
            23.0 + (26.0 + (21.448 - t * (46.815 + t * (0.00059 - t * 0.001813))) / 60.0) / 60.0;
        let obliq = (mean_obliq_deg + 0.00256 * omega.cos()).to_radians();
        let declination_rad = (obliq.sin() * apparent_long.sin()).asin();
        let y = (obliq / 2.0).tan().powi(2);
        let l0 = mean_long_deg.to_radians();
        let eot_rad = y * (2.0 * l0).sin() - 2.0 * ecc * m.sin()
            + 4.0 * ecc * y * m.sin() * (2.0 * l0).cos()
            - 0.5 * y * y * (4.0 * l0).sin()
            - 1.25 * ecc * ecc * (2.0 * m).sin();
        // One degree of hour angle is four minutes of time.
        let equation_of_time_min = 4.0 * eot_rad.to_degrees();
        Self {
            declination_rad,
            equation_of_time_min,
            distance_au,
        }
    }
}

/// Julian day (UT) of a local-standard-time instant; `hour_lst` may lie outside [0, 24].
fn julian_day(year: i32, day_of_year: u32, hour_lst: f64, utc_offset_h: f64) -> f64 {
    let days_since_2000 = days_from_civil_jan1(i64::from(year)) - days_from_civil_jan1(2000);
    JD_2000_JAN_1
        + days_since_2000 as f64
        + f64::from(day_of_year - 1)
        + (hour_lst - utc_offset_h) / 24.0
}

/// Days from 1970-01-01 to 1 January of `year` in the proleptic Gregorian calendar.
fn days_from_civil_jan1(year: i64) -> i64 {
    // Count from 1 March of the previous year so the leap day falls at the end of a cycle.
    let y = year - 1;
    let era = y.div_euclid(400);
    let yoe = y - era * 400;
    // 1 January is day 306 of the March-based year.
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + 306;
    era * 146_097 + doe - 719_468
}

fn is_leap(year: i32) -> bool {
    (year % 4 == 0 && year % 100 != 0) || year % 400 == 0
}

fn check_date(year: i32, day_of_year: u32) -> Result<()> {
    check_input("year", f64::from(year), 1900.0, 2100.0)?;
    let last = if is_leap(year) { 366.0 } else { 365.0 };
    check_input("day_of_year", f64::from(day_of_year), 1.0, last)?;
    Ok(())
}

/// Extraterrestrial irradiance normal to the beam (W m⁻²) on a day, taken at 12:00 UT:
/// S0·(1 AU / r)² with S0 = [`SOLAR_CONSTANT_W_M2`].
pub fn extraterrestrial_normal_w_m2(year: i32, day_of_year: u32) -> Result<f64> {
    check_date(year, day_of_year)?;
    let r = SunTerms::at(julian_day(year, day_of_year, 12.0, 0.0)).distance_au;
    Ok(SOLAR_CONSTANT_W_M2 / (r * r))
}

impl Location {
    /// A site at `latitude_deg` (°, north positive, [−90, 90]), `longitude_deg` (°, east positive,
    /// [−180, 180]) whose local standard time is UTC + `utc_offset_h` (hours, [−12, 14]).
    pub fn new(latitude_deg: f64, longitude_deg: f64, utc_offset_h: f64) -> Result<Self> {
        let latitude_deg = check_range("latitude_deg", latitude_deg, -90.0, 90.0)?;
        let lat = latitude_deg.to_radians();
        Ok(Self {
            latitude_deg,
            longitude_deg: check_range("longitude_deg", longitude_deg, -180.0, 180.0)?,
            utc_offset_h: check_range("utc_offset_h", utc_offset_h, -12.0, 14.0)?,
            sin_cos_lat: (lat.sin(), lat.cos()),
        })
    }

    /// Latitude (°, north positive).
    pub fn latitude_deg(&self) -> f64 {
        self.latitude_deg
    }

    /// Longitude (°, east positive).
    pub fn longitude_deg(&self) -> f64 {
        self.longitude_deg
    }

    /// UTC offset of local standard time (hours).
    pub fn utc_offset_h(&self) -> f64 {
        self.utc_offset_h
    }

    /// Hour angle (°, unwrapped) at `hour_lst` given the day's equation of time (minutes).
    fn hour_angle_deg(&self, hour_lst: f64, equation_of_time_min: f64) -> f64 {
        // True solar time in minutes: clock time shifted by the site's distance from its time
        // zone's meridian (4 min per degree) and by the equation of time.
        let true_solar_min = hour_lst * 60.0 + equation_of_time_min + 4.0 * self.longitude_deg
            - 60.0 * self.utc_offset_h;
        true_solar_min / 4.0 - 180.0
    }

    /// cos Z = a + b·cos h for the declination `decl_rad`.
    fn cos_zenith_coefficients(&self, decl_rad: f64) -> (f64, f64) {
        let (sin_lat, cos_lat) = self.sin_cos_lat;
        (sin_lat * decl_rad.sin(), cos_lat * decl_rad.cos())
    }

    /// The Sun's position at `hour_lst` (fractional hour of local standard time, [0, 24]) on
    /// `day_of_year` (1–365, or 366 in a leap year) of `year` (1900–2100).
    pub fn position(&self, year: i32, day_of_year: u32, hour_lst: f64) -> Result<SolarPosition> {
        check_date(year, day_of_year)?;
        check_input("hour_lst", hour_lst, 0.0, 24.0)?;
        let sun = SunTerms::at(julian_day(year, day_of_year, hour_lst, self.utc_offset_h));
        let h = self.hour_angle_deg(hour_lst, sun.equation_of_time_min);
        let hour_angle_deg = (h + 180.0).rem_euclid(360.0) - 180.0;
        let (a, b) = self.cos_zenith_coefficients(sun.declination_rad);
        let cos_zenith = (a + b * hour_angle_deg.to_radians().cos()).clamp(-1.0, 1.0);
        Ok(SolarPosition {
            declination_deg: sun.declination_rad.to_degrees(),
            equation_of_time_min: sun.equation_of_time_min,
            hour_angle_deg,
            cos_zenith,
            zenith_deg: cos_zenith.acos().to_degrees(),
            earth_sun_distance_au: sun.distance_au,
        })
    }

    /// Sunrise and sunset on `day_of_year` of `year` in local standard time, when the Sun's centre
    /// is at [`SUNRISE_ZENITH_DEG`]. Polar day or night is decided with the Sun's terms at 12:00
    /// local standard time; each event is then refined twice with the terms at its own time, since
    /// near the equinoxes the declination moves about 0.1° in six hours, about a minute of rise or
    /// set time at mid-latitudes.
    pub fn sun_times(&self, year: i32, day_of_year: u32) -> Result<SunTimes> {
        check_date(year, day_of_year)?;
        // Start from the terms at 12:00 and move them to the event's own time.
        let event = |sign: f64| -> std::result::Result<f64, SunTimes> {
            let mut hour = 12.0;
            for _ in 0..3 {
                hour = self.event_hour(year, day_of_year, hour, sign)?;
            }
            Ok(hour)
        };
        match (event(-1.0), event(1.0)) {
            (Ok(sunrise_hour_lst), Ok(sunset_hour_lst)) => Ok(SunTimes::RiseAndSet {
                sunrise_hour_lst,
                sunset_hour_lst,
            }),
            // Polar at noon, or at a refined time within minutes of a polar transition.
            (Err(polar), _) | (_, Err(polar)) => Ok(polar),
        }
    }

    /// Local-standard-time hour at which the Sun's centre crosses [`SUNRISE_ZENITH_DEG`] in the
    /// morning (`sign` = −1) or evening (+1), with the Sun's terms taken at `hour_lst`; or the
    /// polar state when it does not cross.
    fn event_hour(
        &self,
        year: i32,
        day_of_year: u32,
        hour_lst: f64,
        sign: f64,
    ) -> std::result::Result<f64, SunTimes> {
        let sun = SunTerms::at(julian_day(year, day_of_year, hour_lst, self.utc_offset_h));
        let (a, b) = self.cos_zenith_coefficients(sun.declination_rad);
        let cos_h = (SUNRISE_ZENITH_DEG.to_radians().cos() - a) / b;
        // At the poles b = 0 and cos_h is ±∞ or NaN.
        if cos_h.is_nan() {
            return Err(if a > 0.0 {
                SunTimes::PolarDay
            } else {
                SunTimes::PolarNight
            });
        }
        if cos_h >= 1.0 {
            return Err(SunTimes::PolarNight);
        }
        if cos_h <= -1.0 {
            return Err(SunTimes::PolarDay);
        }
        let half_day_deg = cos_h.acos().to_degrees();
        // Solar noon is where the hour angle is zero; the hour angle advances 15° per hour.
        let solar_noon = 12.0 - self.hour_angle_deg(12.0, sun.equation_of_time_min) / 15.0;
        Ok(solar_noon + sign * half_day_deg / 15.0)
    }

    /// Mean of max(0, cos Z) over the interval from `hour_start_lst` to `hour_end_lst` (local
    /// standard time hours on `day_of_year`; start in [0, 24], end after start and at most 24 h
    /// later, so it may run into the next day), counting night as zero.
    ///
    /// A forcing value holds for an interval, and the mean of cos Z over it is what scales
    /// extraterrestrial irradiance over that interval. With declination and equation of time held
    /// at the interval's midpoint, cos Z = a + b·cos h is a cosine in the hour angle h, which
    /// advances uniformly at 15° h⁻¹; its positive part integrates in closed form:
    /// ∫ (a + b·cos h) dh = a·h + b·sin h over the daylight parts of the interval.
    pub fn mean_cos_zenith(
        &self,
        year: i32,
        day_of_year: u32,
        hour_start_lst: f64,
        hour_end_lst: f64,
    ) -> Result<f64> {
        Ok(self
            .mean_cos_zenith_and_distance(year, day_of_year, hour_start_lst, hour_end_lst)?
            .0)
    }

    /// [`Location::mean_cos_zenith`] and [`Location::mean_extraterrestrial_horizontal_w_m2`]
    /// (W m⁻²) together, from one evaluation of the Sun's position; arguments as there.
    pub fn mean_cos_zenith_and_extraterrestrial_w_m2(
        &self,
        year: i32,
        day_of_year: u32,
        hour_start_lst: f64,
        hour_end_lst: f64,
    ) -> Result<(f64, f64)> {
        let (mu, r) =
            self.mean_cos_zenith_and_distance(year, day_of_year, hour_start_lst, hour_end_lst)?;
        Ok((mu, SOLAR_CONSTANT_W_M2 / (r * r) * mu))
    }

    fn mean_cos_zenith_and_distance(
        &self,
        year: i32,
        day_of_year: u32,
        hour_start_lst: f64,
        hour_end_lst: f64,
    ) -> Result<(f64, f64)> {
        check_date(year, day_of_year)?;
        check_input("hour_start_lst", hour_start_lst, 0.0, 24.0)?;
        check_input(
            "hour_end_lst",
            hour_end_lst,
            hour_start_lst,
            hour_start_lst + 24.0,
        )?;
        if hour_end_lst == hour_start_lst {
            let p = self.position(year, day_of_year, hour_start_lst)?;
            return Ok((p.cos_zenith.max(0.0), p.earth_sun_distance_au));
        }
        let mid = 0.5 * (hour_start_lst + hour_end_lst);
        let sun = SunTerms::at(julian_day(year, day_of_year, mid, self.utc_offset_h));
        let (a, b) = self.cos_zenith_coefficients(sun.declination_rad);
        let h0 = self
            .hour_angle_deg(hour_start_lst, sun.equation_of_time_min)
            .to_radians();
        let h1 = self
            .hour_angle_deg(hour_end_lst, sun.equation_of_time_min)
            .to_radians();
        // Half-width of daylight in hour angle: cos Z > 0 for |h| < hs (mod 2π).
        let hs = if b > 0.0 {
            (-a / b).clamp(-1.0, 1.0).acos()
        } else if a > 0.0 {
            std::f64::consts::PI
        } else {
            0.0
        };
        let tau = std::f64::consts::TAU;
        let first = ((h0 - hs) / tau).floor() as i64;
        let last = ((h1 + hs) / tau).ceil() as i64;
        let mut integral = 0.0;
        for k in first..=last {
            let centre = k as f64 * tau;
            let lo = h0.max(centre - hs);
            let hi = h1.min(centre + hs);
            if hi > lo {
                integral += a * (hi - lo) + b * (hi.sin() - lo.sin());
            }
        }
        Ok(((integral / (h1 - h0)).max(0.0), sun.distance_au))
    }

    /// Mean extraterrestrial irradiance on a horizontal surface (W m⁻²) over an interval, as
    /// S0·(1 AU / r)²·[`Location::mean_cos_zenith`]; arguments as there.
    pub fn mean_extraterrestrial_horizontal_w_m2(
        &self,
        year: i32,
        day_of_year: u32,
        hour_start_lst: f64,
        hour_end_lst: f64,
    ) -> Result<f64> {
        Ok(self
            .mean_cos_zenith_and_extraterrestrial_w_m2(
                year,
                day_of_year,
                hour_start_lst,
                hour_end_lst,
            )?
            .1)
    }
}

impl SolarPosition {
    /// Whether the Sun's centre is above the geometric horizon (cos Z > 0).
    pub fn is_up(&self) -> bool {
        self.cos_zenith > 0.0
    }

    /// Extraterrestrial irradiance on a horizontal surface (W m⁻²): S0·(1 AU / r)²·max(0, cos Z).
    pub fn extraterrestrial_horizontal_w_m2(&self) -> f64 {
        SOLAR_CONSTANT_W_M2 / self.earth_sun_distance_au.powi(2) * self.cos_zenith.max(0.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn julian_day_of_j2000_epoch() {
        // J2000.0 is 2000-01-01 12:00 TT, JD 2451545.0 (Meeus 1991; from memory).
        assert_eq!(julian_day(2000, 1, 12.0, 0.0), 2_451_545.0);
        // 1 January 2024 00:00 UT is JD 2460310.5 (from memory); 2024 is 8766 days after 2000.
        assert_eq!(julian_day(2024, 1, 0.0, 0.0), 2_460_310.5);
    }

    #[test]
    fn rejects_bad_inputs() {
        assert!(Location::new(91.0, 0.0, 0.0).is_err());
        assert!(Location::new(0.0, f64::NAN, 0.0).is_err());
        let site = Location::new(45.0, 10.0, 1.0).unwrap();
        assert!(site.position(2023, 366, 12.0).is_err());
        assert!(site.position(2024, 366, 12.0).is_ok());
        assert!(site.mean_cos_zenith(2024, 10, 12.0, 11.0).is_err());
    }
}
