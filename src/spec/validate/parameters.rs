//! The parameter list: the linear utility's parameters, those the family adds
//! through its `FamilyRules`, the `[parameters]` starts and fixed values, and
//! the restrictions on them.

use crate::spec::raw::RawParameter;
use crate::spec::{
    parse_restriction, Alternative, Attribute, Characteristic, Coefficient, Copies,
    FamilyParameter, Parameter, Restriction, Term,
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
        class: 0,
    })
}

/// The linear parameters once per class when the family estimates `copies`
/// of them: class k's copy of `name` is `name_class<k>`, class by class;
/// the common ones stay once, unrenamed, where they were.
pub(super) fn copied(linear: Vec<Parameter>, copies: &Copies) -> Result<Vec<Parameter>, String> {
    for c in &copies.common {
        if !linear.iter().any(|p| &p.name == c) {
            return Err(format!(
                "{}: `{c}` is not a parameter of the utility (it has: {})",
                copies.common_key,
                linear
                    .iter()
                    .map(|p| p.name.as_str())
                    .collect::<Vec<_>>()
                    .join(", ")
            ));
        }
    }
    if copies.count <= 1 {
        return Ok(linear);
    }
    let mut out = Vec::with_capacity(linear.len() * copies.count);
    for k in 1..=copies.count {
        for p in &linear {
            if copies.common.contains(&p.name) {
                if k == 1 {
                    out.push(p.clone());
                }
                continue;
            }
            let mut q = p.clone();
            q.name = format!("{}_class{k}", p.name);
            q.class = k;
            out.push(q);
        }
    }
    Ok(out)
}

/// The linear utility's parameters: constants, then attributes, then characteristics.
pub(super) fn linear(
    alternatives: &[Alternative],
    base: usize,
    constants: bool,
    (attributes, characteristics): (&[Attribute], &[Characteristic]),
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
            class: 0,
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
