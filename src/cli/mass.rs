//! `heft mass`: the mass/density calculator. Parses the flags into a
//! [`heft::derive::MassQuery`], calls [`heft::derive::calculate`] and prints.

use std::process::ExitCode;

use heft::derive::{MassQuery, PlanetDerived, RadiusQuery, calculate};
use heft::summary::Summary;
use heft::target::Settings;
use serde::Serialize;

use super::Failure;

/// Arguments of `heft mass`.
#[derive(clap::Args)]
pub struct MassArgs {
    /// Orbital period, days.
    #[arg(long = "period-d", value_name = "P", allow_negative_numbers = true)]
    period_d: f64,
    /// RV semi-amplitude, m/s.
    #[arg(long = "k-mps", value_name = "K", allow_negative_numbers = true)]
    k_mps: f64,
    /// Eccentricity.
    #[arg(
        long,
        value_name = "E",
        default_value_t = 0.0,
        allow_negative_numbers = true
    )]
    ecc: f64,
    /// Stellar mass, solar masses.
    #[arg(long = "mstar-msun", value_name = "M", allow_negative_numbers = true)]
    mstar_msun: f64,
    /// 1σ uncertainty of the stellar mass, solar masses.
    #[arg(
        long = "mstar-err",
        value_name = "S",
        default_value_t = 0.0,
        allow_negative_numbers = true
    )]
    mstar_err: f64,
    /// Orbital inclination, degrees (without it, a radius implies 90°).
    #[arg(long = "incl-deg", value_name = "I", allow_negative_numbers = true)]
    incl_deg: Option<f64>,
    /// Planet-to-star radius ratio (needs --rstar-rsun).
    #[arg(
        long = "rp-rs",
        value_name = "X",
        requires = "rstar_rsun",
        conflicts_with = "radius_rearth",
        allow_negative_numbers = true
    )]
    rp_rs: Option<f64>,
    /// Stellar radius, nominal solar radii (with --rp-rs).
    #[arg(
        long = "rstar-rsun",
        value_name = "R",
        requires = "rp_rs",
        allow_negative_numbers = true
    )]
    rstar_rsun: Option<f64>,
    /// 1σ uncertainty of the stellar radius, solar radii.
    #[arg(
        long = "rstar-err",
        value_name = "S",
        requires = "rstar_rsun",
        allow_negative_numbers = true
    )]
    rstar_err: Option<f64>,
    /// Planet radius, nominal equatorial Earth radii (6378.1 km).
    #[arg(
        long = "radius-rearth",
        value_name = "R",
        allow_negative_numbers = true
    )]
    radius_rearth: Option<f64>,
    /// 1σ uncertainty of the planet radius, Earth radii.
    #[arg(
        long = "radius-err",
        value_name = "S",
        requires = "radius_rearth",
        allow_negative_numbers = true
    )]
    radius_err: Option<f64>,
    /// Seed of the Monte Carlo draws.
    #[arg(long, default_value_t = Settings::default().seed)]
    seed: u64,
    /// Number of Monte Carlo draws when an input is uncertain.
    #[arg(long, default_value_t = Settings::default().draws)]
    draws: usize,
    /// Print a JSON document instead of text.
    #[arg(long)]
    json: bool,
}

impl MassArgs {
    fn query(&self) -> MassQuery {
        let radius = match (self.rp_rs, self.rstar_rsun, self.radius_rearth) {
            (Some(rp_rs), Some(rstar_rsun), _) => Some(RadiusQuery::Ratio {
                rp_rs,
                rstar_rsun,
                rstar_err_rsun: self.rstar_err.unwrap_or(0.0),
            }),
            (_, _, Some(radius_rearth)) => Some(RadiusQuery::Absolute {
                radius_rearth,
                radius_err_rearth: self.radius_err.unwrap_or(0.0),
            }),
            _ => None,
        };
        MassQuery {
            period_d: self.period_d,
            k_mps: self.k_mps,
            ecc: self.ecc,
            mstar_msun: self.mstar_msun,
            mstar_err_msun: self.mstar_err,
            incl_deg: self.incl_deg,
            radius,
        }
    }
}

/// One planet in the JSON output: the (exact) orbit and everything derived from it.
#[derive(Serialize)]
struct PlanetOut<'a> {
    period_d: Summary,
    k_mps: Summary,
    ecc: Summary,
    #[serde(flatten)]
    derived: &'a PlanetDerived,
}

/// The JSON document of `heft mass`.
#[derive(Serialize)]
struct MassOut<'a> {
    schema: &'static str,
    command: &'static str,
    inputs: &'a MassQuery,
    uncertainties: &'static str,
    draws: usize,
    seed: u64,
    planets: [PlanetOut<'a>; 1],
}

/// Runs the calculator.
pub fn run(args: &MassArgs) -> Result<ExitCode, Failure> {
    let query = args.query();
    let planet = calculate(&query, args.draws, args.seed).map_err(|e| Failure::Input(e.into()))?;
    if args.json {
        let out = MassOut {
            schema: "heft-results/1",
            command: "mass",
            inputs: &query,
            uncertainties: if planet.n_draws() > 1 {
                "Monte Carlo: inputs with a 1-sigma error drawn from normal distributions truncated to positive values"
            } else {
                "none: exact computation"
            },
            draws: planet.n_draws(),
            seed: args.seed,
            planets: [PlanetOut {
                period_d: Summary::exact(query.period_d),
                k_mps: Summary::exact(query.k_mps),
                ecc: Summary::exact(query.ecc),
                derived: &planet,
            }],
        };
        let text = serde_json::to_string_pretty(&out)
            .map_err(|e| Failure::Internal(anyhow::anyhow!("cannot write JSON: {e}")))?;
        super::emit(&(text + "\n"), true)?;
    } else {
        super::emit(&text_lines(&planet, args.seed), false)?;
    }
    Ok(ExitCode::SUCCESS)
}

/// The result as aligned text lines.
fn text_lines(p: &PlanetDerived, seed: u64) -> String {
    use std::fmt::Write;
    let mut out = String::new();
    if p.n_draws() > 1 {
        let _ = writeln!(
            out,
            "{} Monte Carlo draws, seed {seed}; value -minus +plus (1 sigma)",
            p.n_draws()
        );
    }
    let mut line = |label: &str, s: &Summary, unit: &str| {
        let _ = writeln!(out, "{label:<10} {} {unit}", format_summary(s));
    };
    line("m sin i", &p.msini_mearth, "M_earth");
    line("", &p.msini_mjup, "M_jup");
    if let (Some(m), Some(mj)) = (&p.mass_mearth, &p.mass_mjup) {
        line("mass", m, "M_earth");
        line("", mj, "M_jup");
    }
    if let Some(i) = &p.incl_deg {
        line("incl", i, "deg");
    }
    line("a", &p.a_au, "au");
    let optional = [
        ("radius", &p.radius_rearth, "R_earth"),
        ("density", &p.density_gcc, "g/cm^3"),
        ("gravity", &p.gravity_mps2, "m/s^2"),
        ("v_esc", &p.vesc_kms, "km/s"),
    ];
    for (label, s, unit) in optional {
        if let Some(s) = s {
            line(label, s, unit);
        }
    }
    if let Some(c) = p.class {
        let _ = writeln!(out, "{:<10} {c}", "class");
    }
    for n in &p.notes {
        let _ = writeln!(out, "note: {n}");
    }
    out
}

/// `value` (four significant digits) or `value -minus +plus` with the errors to two
/// significant digits and the value to the same decimal place; scientific notation for
/// values outside 1e-3..1e6.
fn format_summary(s: &Summary) -> String {
    let exact = s.minus == 0.0 && s.plus == 0.0;
    let magnitude = |x: f64| x.abs().log10().floor();
    let plain = s.value == 0.0 || (-3.0..6.0).contains(&magnitude(s.value));
    if !s.value.is_finite() || !plain {
        return if exact {
            format!("{:.3e}", s.value)
        } else {
            format!("{:.3e} -{:.1e} +{:.1e}", s.value, s.minus, s.plus)
        };
    }
    let decimals = |digits: f64, x: f64| (digits - 1.0 - magnitude(x)).clamp(0.0, 12.0) as usize;
    if exact {
        let d = if s.value == 0.0 {
            0
        } else {
            decimals(4.0, s.value)
        };
        return format!("{:.d$}", s.value);
    }
    let smallest = [s.minus, s.plus]
        .into_iter()
        .filter(|&e| e > 0.0)
        .fold(f64::INFINITY, f64::min);
    let d = decimals(2.0, smallest);
    format!("{:.d$} -{:.d$} +{:.d$}", s.value, s.minus, s.plus)
}
