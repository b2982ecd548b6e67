//! "Cautions": what the design's figures assume.

use super::DesignSection;
use crate::experiment::Outcome;
use crate::report::html::page::esc;

pub struct Cautions;

/// What a design's expected precision rests on.
pub const SENTENCES: &[&str] = &[
    "The expected standard errors and sample sizes hold only if respondents answer like a logit whose coefficients equal the priors' means; wrong priors (signs included) make the design less efficient than reported.",
    "Respondents' tastes differ, some answer carelessly and some do not finish: plan on more respondents than the formula gives, and pilot the survey to update the priors.",
    "A design says nothing of who answers it: the estimates describe the population only as far as the sample represents it.",
    "For transport appraisal, follow the local official guidance on stated-choice surveys and on the values they feed.",
];

impl DesignSection for Cautions {
    fn names(&self) -> (&'static str, &'static str) {
        ("cautions", "Cautions")
    }

    fn html(&self, _o: &Outcome) -> String {
        let mut s = String::from("<ul class=\"cautions\">\n");
        for c in SENTENCES {
            s.push_str(&format!("<li>{}</li>\n", esc(c)));
        }
        s.push_str("</ul>\n");
        s
    }

    fn text(&self, _o: &Outcome) -> Option<String> {
        Some(format!("Cautions: {}", SENTENCES.join(" ")))
    }
}
