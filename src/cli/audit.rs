//! `heft audit`: is a claimed signal, and the mass that follows from it, robust?

use std::process::ExitCode;

use heft::audit::{self, AuditSettings, Context};
use heft::report::{audit_json, summary_text};

use super::Failure;
use super::fit::{FitArgs, analyse};

/// Arguments of `heft audit`: those of `heft fit` (at least one --period; with
/// --rotation-d the audit also tests a signal at the rotation period).
#[derive(clap::Args, Debug)]
pub struct AuditArgs {
    #[command(flatten)]
    fit: FitArgs,
}

/// Runs the command: fits the data with the claimed periods as starting points (and any
/// further signals the search finds), audits the claimed planets, prints the summary or
/// the JSON, and exits with status 4 when the verdict is not `robust`.
pub fn run(args: &AuditArgs) -> Result<ExitCode, Failure> {
    let n_claims = args.fit.periods().len();
    if n_claims == 0 {
        return Err(Failure::Input(anyhow::anyhow!(
            "heft audit needs the claimed period: --period P (repeatable)"
        )));
    }
    let rotation = args.fit.rotation()?;
    let star = args.fit.star()?;
    let request = args.fit.request(star.as_ref())?;
    let sampler = request.sampler;
    let mut analysis = analyse(request)?;
    let busy = super::spinner("auditing: aliases, model variants, jackknife");
    let labels: Vec<String> = analysis
        .search
        .fit
        .planets
        .iter()
        .take(n_claims)
        .map(|p| p.label.clone())
        .collect();
    let ctx = Context {
        star: star.as_ref(),
        transits: &[],
        labels: &labels,
    };
    let settings = AuditSettings {
        seed: args.fit.seed(),
        rotation_d: rotation,
        sampler,
        ..AuditSettings::default()
    };
    let result = audit::audit(&analysis, &ctx, &settings).map_err(|e| Failure::Input(e.into()))?;
    busy.finish_and_clear();
    let robust = result.is_robust();
    analysis.audit = Some(result);
    let text = if args.fit.json() {
        let mut s = serde_json::to_string_pretty(&audit_json(&analysis))
            .map_err(|e| Failure::Internal(e.into()))?;
        s.push('\n');
        s
    } else {
        summary_text(&analysis)
    };
    super::emit(&text, args.fit.json())?;
    Ok(if robust {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(4)
    })
}
