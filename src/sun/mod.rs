//! The sun through the day: its position from a date, a time and a site
//! (position.rs), and a day swept in steps with every sun beam turned to
//! it (day.rs). See docs/FORMATS.md §2 (`site`) and §3 (`sun`, `day`).

mod day;
mod position;

pub use day::{
    aim_suns, day_step, day_sweep, day_times, is_sun, iso, peak_at, screen_figures, site_of, worst_of, DayReport, DayRequest,
    DayStep, PlacedBeam, StepScreen, Worst, MAX_OUT_OF_PLANE_DEG, MAX_STEP_MIN,
};
pub use position::{
    check_place, local, parse_clock, parse_date, parse_time, standard_offset, sun_at_site, sun_position, sun_vector, Atmosphere,
    SunPosition,
};
