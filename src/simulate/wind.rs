//! Wind classes of windblown vegetation (Billingsley, *Low-Angle Radar Land Clutter*, 2002,
//! ch. 3, from memory): the class of a wind speed and the exponential spectrum's shape
//! parameter of each class. Shared by the scene checks and the vegetation source.

/// Exponential shape parameter beta (per m/s) of a wind class (Billingsley 2002, from
/// memory): light air 12, breezy 8, windy 5.7, gale 4.3.
pub fn beta_of_class(class: &str) -> Option<f64> {
    match class {
        "light-air" => Some(12.0),
        "breezy" => Some(8.0),
        "windy" => Some(5.7),
        "gale" => Some(4.3),
        _ => None,
    }
}

/// Wind class of a wind speed in mph: < 7.5 light air, < 15 breezy, < 30 windy, else gale.
pub fn class_of_wind(wind_mph: f64) -> &'static str {
    if wind_mph < 7.5 {
        "light-air"
    } else if wind_mph < 15.0 {
        "breezy"
    } else if wind_mph < 30.0 {
        "windy"
    } else {
        "gale"
    }
}
