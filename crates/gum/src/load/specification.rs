//! `[measurands.specification]`: tolerance limits and the decision rule
//! (JCGM 106:2012).

use super::*;

impl Loader<'_> {
    /// `specification` of a measurand: tolerance limits and decision rule
    /// (JCGM 106:2012), in the measurand's unit.
    pub(super) fn specification(&self, r: &mut Reader) -> Result<Option<Specification>> {
        use crate::conformity::{Guard, Process, Rule};
        let doc = self.doc;
        let Some(v) = r.get("specification") else {
            return Ok(None);
        };
        let path = r.key_path("specification");
        let DeValue::Table(t) = v.get_ref() else {
            return Err(r.err(
                v.span(),
                "specification",
                format!(
                    "expected a table with lower and/or upper (the tolerance limits) and rule, found {}",
                    type_name(v.get_ref())
                ),
            ));
        };
        let mut s = Reader::new(doc, &path, t, v.span());
        let lower = s.number("lower")?;
        let upper = s.number("upper")?;
        if lower.is_none() && upper.is_none() {
            return Err(doc.error(
                v.span(),
                &path,
                "a specification needs `lower`, `upper` or both (the tolerance limits, in the measurand's unit)",
            ));
        }
        if let (Some(l), Some(u)) = (&lower, &upper) {
            if l.value >= u.value {
                return Err(s.err(
                    u.span.clone(),
                    "upper",
                    format!(
                        "the upper limit {} must be greater than the lower limit {}",
                        u.text, l.text
                    ),
                ));
            }
        }
        let rule_text = s.string("rule")?;
        let multiple = s.number("guard_multiple")?;
        let risk = s.number("max_specific_risk")?;
        let rule = match &rule_text {
            None => {
                if multiple.is_some() || risk.is_some() {
                    return Err(doc.error(
                        v.span(),
                        &path,
                        "a guard band is given but no `rule`: say \"guarded acceptance\" or \"guarded rejection\"",
                    ));
                }
                Rule::SimpleAcceptance
            }
            Some((t, span)) => match t.as_str() {
                "simple acceptance" => Rule::SimpleAcceptance,
                "guarded acceptance" => Rule::GuardedAcceptance,
                "guarded rejection" => Rule::GuardedRejection,
                other => {
                    let known = [
                        "simple acceptance",
                        "guarded acceptance",
                        "guarded rejection",
                    ];
                    let mut msg = format!("unknown decision rule `{other}`");
                    if let Some(c) = closest(other, known.iter().copied()) {
                        msg.push_str(&format!("; did you mean `{c}`?"));
                    }
                    let mut e = s.err(span.clone(), "rule", msg);
                    e.detail = Some(format!("rules: {}", known.join(", ")));
                    return Err(e);
                }
            },
        };
        let guard = match (rule, &multiple, &risk) {
            (Rule::SimpleAcceptance, None, None) => Guard::None,
            (Rule::SimpleAcceptance, Some(n), _) | (Rule::SimpleAcceptance, None, Some(n)) => {
                let key = if multiple.is_some() {
                    "guard_multiple"
                } else {
                    "max_specific_risk"
                };
                return Err(s.err(
                    n.span.clone(),
                    key,
                    "simple acceptance has no guard band; use rule = \"guarded acceptance\" or \"guarded rejection\"",
                ));
            }
            (_, Some(_), Some(n)) => {
                return Err(s.err(
                    n.span.clone(),
                    "max_specific_risk",
                    "give either `guard_multiple` or `max_specific_risk`, not both",
                ));
            }
            (_, None, None) => {
                return Err(doc.error(
                    v.span(),
                    &path,
                    format!(
                        "{} needs a guard band: `guard_multiple` (w = r U) or `max_specific_risk` (the largest \
                         specific risk, e.g. 0.05)",
                        rule.name()
                    ),
                ));
            }
            (_, Some(n), None) => {
                if n.value < 0.0 {
                    return Err(s.err(
                        n.span.clone(),
                        "guard_multiple",
                        format!(
                            "the guard band multiple must not be negative, found {}",
                            n.text
                        ),
                    ));
                }
                Guard::MultipleOfU(n.value)
            }
            (_, None, Some(n)) => {
                if !(n.value > 0.0 && n.value < 0.5) {
                    return Err(s.err(
                        n.span.clone(),
                        "max_specific_risk",
                        format!(
                            "the largest specific risk is a probability between 0 and 0.5 (e.g. 0.05), found {}",
                            n.text
                        ),
                    ));
                }
                Guard::SpecificRisk(n.value)
            }
        };
        let mean = s.number("process_mean")?;
        let sd = s.number("process_standard_deviation")?;
        let process = match (mean, sd) {
            (None, None) => None,
            (Some(m), Some(sd)) => {
                if sd.value <= 0.0 {
                    return Err(s.err(
                        sd.span,
                        "process_standard_deviation",
                        format!(
                            "the process standard deviation must be positive, found {}",
                            sd.text
                        ),
                    ));
                }
                Some(Process {
                    mean: m.value,
                    standard_deviation: sd.value,
                })
            }
            (Some(_), None) | (None, Some(_)) => {
                return Err(doc.error(
                    v.span(),
                    &path,
                    "the process distribution needs both `process_mean` and `process_standard_deviation`",
                ));
            }
        };
        s.finish(SPECIFICATION_KEYS)?;
        Ok(Some(Specification {
            lower: lower.map(|n| n.value),
            upper: upper.map(|n| n.value),
            rule,
            guard,
            process,
        }))
    }
}
