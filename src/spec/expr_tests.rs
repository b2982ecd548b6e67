//! Unit tests of the expression language: precedence, error positions, bounds.

use super::*;

fn eval1(text: &str) -> f64 {
    let cols = [("a", vec![2.0]), ("b", vec![3.0])];
    let e = Expr::parse(text).unwrap();
    let lookup = |name: &str| cols.iter().find(|c| c.0 == name).map(|c| c.1.as_slice());
    e.eval(&lookup, 1).unwrap()[0]
}

#[test]
fn precedence_follows_school_arithmetic() {
    assert_eq!(eval1("1 + 2 * 3"), 7.0);
    assert_eq!(eval1("-a ^ 2"), -4.0);
    assert_eq!(eval1("2 ^ 3 ^ 2"), 512.0);
    assert_eq!(eval1("(a + b) * 2"), 10.0);
    assert_eq!(eval1("a < b"), 1.0);
    assert_eq!(eval1("a + 1 == b"), 1.0);
    assert_eq!(eval1("max(a, b) - min(a, b)"), 1.0);
    assert!((eval1("log(exp(a))") - 2.0).abs() < 1e-15);
    assert_eq!(eval1("sqrt(abs(-16))"), 4.0);
    assert_eq!(eval1("1.5e2 / 3"), 50.0);
}

#[test]
fn errors_point_at_the_character() {
    let e = Expr::parse("a + * b").unwrap_err();
    assert_eq!(e.position, 4);
    let e = Expr::parse("a + (b").unwrap_err();
    assert_eq!(e.position, 6);
    let e = Expr::parse("foo(a)").unwrap_err();
    assert!(e.message.contains("foo"));
    let e = Expr::parse("a = b").unwrap_err();
    assert_eq!(e.position, 2);
    assert!(e.to_string().contains("at character 3"));
}

#[test]
fn depth_and_length_are_bounded_with_a_message() {
    // Regression: deep nesting overflowed the stack and aborted the process.
    for deep in [
        format!("{}a{}", "(".repeat(100_000), ")".repeat(100_000)),
        format!("{}a", "-".repeat(3000)),
        "a^".repeat(1500) + "a",
        format!("{}a{}", "abs(".repeat(1000), ")".repeat(1000)),
    ] {
        let e = Expr::parse(&deep).unwrap_err();
        assert!(
            e.message.contains("nested") || e.message.contains("characters long"),
            "{}",
            e.message
        );
        assert!(e.to_string().lines().all(|l| l.chars().count() < 200));
    }
    let long = vec!["a"; 50_000].join("+");
    let e = Expr::parse(&long).unwrap_err();
    assert!(e.message.contains("99999 characters long"), "{}", e.message);
    // at the limits: accepted
    let ok = format!("{}a{}", "(".repeat(MAX_NESTING), ")".repeat(MAX_NESTING));
    assert_eq!(eval1(&ok), 2.0);
    let chain = vec!["a"; MAX_LENGTH / 2].join("+");
    assert_eq!(eval1(&chain), 2.0 * (MAX_LENGTH / 2) as f64);
}
