//! The parameter list: the linear utility's parameters, those the family adds
//! through its `FamilyRules`, the `[parameters]` starts and fixed values, and
//! the restrictions on them.

use crate::spec::raw::RawParameter;
use crate::spec::{
    parse_restriction, Alternative, Attribute, Characteristic, Coefficient, FamilyParameter,
    Parameter, Restriction, Term,
};

fn push(parameters: &mut Vec<Parameter>, name: String, term: Term, alternative: Option<usize>) {
    parameters.push(Parameter {
        name,
        term,
        alternative,
        start: 0.0,
        fixed: None,
        null: 0.0,
        in_reference: false,
    })
}

/// The linear utility's parameters: constants, then attributes, then characteristics.
pub(super) fn linear(
    alternatives: &[Alternative],
    base: usize,
    constants: bool,
    attributes: &[Attribute],
    characteristics: &[Characteristic],
    single: bool,
) -> Vec<Parameter> {
    let mut parameters = Vec::new();
    if constants {
        for (j, alt) in alternatives.iter().enumerate() {
            if j != base {
                let name = format!("asc_{}", alt.name);
                push(&mut parameters, name, Term::Constant, Some(j));
            }
        }
    }
    for (k, a) in attributes.iter().enumerate() {
        match a.coefficient {
            Coefficient::Shared => push(&mut parameters, a.name.clone(), Term::Attribute(k), None),
            Coefficient::PerAlternative => {
                for (j, s) in a.sources.iter().enumerate() {
                    if s.is_some() {
                        let name = format!("{}_{}", a.name, alternatives[j].name);
                        push(&mut parameters, name, Term::Attribute(k), Some(j));
                    }
                }
            }
        }
    }
    for (k, c) in characteristics.iter().enumerate() {
        if single {
            let name = c.name.clone();
            push(&mut parameters, name, Term::Characteristic(k), None);
            continue;
        }
        for &j in &c.alternatives {
            let name = format!("{}_{}", c.name, alternatives[j].name);
            push(&mut parameters, name, Term::Characteristic(k), Some(j));
        }
    }
    parameters
}

/// The parameters the family's rules added (after checking its own sections
/// and keys) appended to the linear ones; no two names may then coincide.
pub(super) fn add_family(
    parameters: &mut Vec<Parameter>,
    extra: Vec<FamilyParameter>,
) -> Result<(), String> {
    for p in extra {
        parameters.push(Parameter {
            name: p.name,
            term: Term::Family(p.label),
            alternative: None,
            start: p.start,
            fixed: None,
            null: p.null,
            in_reference: p.in_reference,
        });
    }
    for (i, p) in parameters.iter().enumerate() {
        if parameters[..i].iter().any(|q| q.name == p.name) {
            return Err(format!(
                "two parameters would both be named `{}`; rename an attribute or characteristic",
                p.name
            ));
        }
    }
    Ok(())
}

/// `[parameters]`: a start or a fixed value (finite) for named parameters.
pub(super) fn starts(table: &toml::Table, parameters: &mut [Parameter]) -> Result<(), String> {
    let known = |parameters: &[Parameter]| {
        parameters
            .iter()
            .map(|p| p.name.clone())
            .collect::<Vec<_>>()
            .join(", ")
    };
    for (name, v) in table.iter() {
        let Some(i) = parameters.iter().position(|p| &p.name == name) else {
            return Err(format!(
                "[parameters].{name}: no parameter of this model is named `{name}` (the model has: {})",
                known(parameters)
            ));
        };
        let p = &mut parameters[i];
        let rp: RawParameter = v
            .clone()
            .try_into()
            .map_err(|e| format!("[parameters].{name}: {}", e.to_string().trim_end()))?;
        if rp.start.is_some() && rp.fixed.is_some() {
            return Err(format!(
                "[parameters].{name}: give `start` or `fixed`, not both"
            ));
        }
        if let Some(s) = rp.start {
            p.start = s;
        }
        if let Some(f) = rp.fixed {
            p.start = f;
            p.fixed = Some(f);
        }
        if !p.start.is_finite() {
            return Err(format!("[parameters].{name}: the value must be finite"));
        }
    }
    Ok(())
}

/// `restrictions`: each line parsed against the parameter list.
pub(super) fn restrictions(
    lines: &[String],
    parameters: &[Parameter],
) -> Result<Vec<Restriction>, String> {
    let mut restrictions = Vec::new();
    for text in lines {
        restrictions.push(
            parse_restriction(text, parameters)
                .map_err(|m| format!("restrictions: `{text}`: {m}"))?,
        );
    }
    Ok(restrictions)
}
