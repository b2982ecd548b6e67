//! Scenarios written back out as TOML that `Scenario::from_str` reads (the
//! workbench saves its what-ifs this way).

use std::fmt::Write;

use super::file::{NewAlternative, NewValue, Op, Scenario, Target};
use crate::spec::Spec;

/// A TOML string.
fn q(s: &str) -> String {
    toml::Value::String(s.to_string()).to_string()
}

/// A TOML key: bare where it can be, quoted otherwise.
fn key(s: &str) -> String {
    if !s.is_empty()
        && s.chars()
            .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-')
    {
        s.to_string()
    } else {
        q(s)
    }
}

impl Scenario {
    /// The scenario as a TOML file that `from_str` reads back.
    pub fn to_toml(&self, spec: &Spec) -> String {
        let mut s = String::new();
        let _ = writeln!(s, "name = {}", q(&self.name));
        if !self.remove.is_empty() {
            let names: Vec<String> = self
                .remove
                .iter()
                .map(|&k| q(&spec.alternatives[k].name))
                .collect();
            let _ = writeln!(s, "remove = [{}]", names.join(", "));
        }
        if let Some(p) = self.price {
            let _ = writeln!(s, "price = {}", q(&spec.attributes[p].name));
        }
        for c in &self.changes {
            let _ = writeln!(s, "\n[[change]]");
            match c.target {
                Target::Attribute {
                    attribute,
                    alternative,
                } => {
                    let _ = writeln!(s, "attribute = {}", q(&spec.attributes[attribute].name));
                    let _ = writeln!(
                        s,
                        "alternative = {}",
                        q(&spec.alternatives[alternative].name)
                    );
                }
                Target::Characteristic { characteristic } => {
                    let _ = writeln!(
                        s,
                        "attribute = {}",
                        q(&spec.characteristics[characteristic].name)
                    );
                }
            }
            let (key, v) = match c.op {
                Op::Multiply(v) => ("multiply", v),
                Op::Add(v) => ("add", v),
                Op::Set(v) => ("set", v),
            };
            let _ = writeln!(s, "{key} = {}", toml::Value::Float(v));
            if let Some((text, _)) = &c.filter {
                let _ = writeln!(s, "where = {}", q(text));
            }
        }
        for n in &self.new_alternatives {
            new_alternative(&mut s, spec, n);
        }
        if let Some(t) = &self.calibration {
            let parts: Vec<String> = t
                .iter()
                .map(|(j, v)| {
                    format!(
                        "{} = {}",
                        key(&spec.alternatives[*j].name),
                        toml::Value::Float(*v)
                    )
                })
                .collect();
            let _ = writeln!(s, "\n[calibration]\ntargets = {{ {} }}", parts.join(", "));
        }
        s
    }
}

/// One `[[new_alternative]]` table.
fn new_alternative(s: &mut String, spec: &Spec, n: &NewAlternative) {
    let _ = writeln!(
        s,
        "\n[[new_alternative]]\nname = {}\nlike = {}",
        q(&n.name),
        q(&spec.alternatives[n.like].name)
    );
    if let Some(g) = &n.nest {
        let _ = writeln!(s, "nest = {}", q(g));
    }
    if let Some(c) = n.constant {
        let _ = writeln!(s, "constant = {}", toml::Value::Float(c));
    }
    if let Some(a) = &n.available {
        let _ = writeln!(s, "available = {}", q(a));
    }
    let parts: Vec<String> = n
        .attributes
        .iter()
        .map(|(a, v)| {
            let v = match v {
                NewValue::Number(x) => toml::Value::Float(*x).to_string(),
                NewValue::Expression(t, _) => q(t),
            };
            format!("{} = {v}", key(&spec.attributes[*a].name))
        })
        .collect();
    let _ = writeln!(s, "attributes = {{ {} }}", parts.join(", "));
}
