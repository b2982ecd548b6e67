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
fn and_and_or_bind_below_comparisons_and_give_one_or_zero() {
    // common practice: `&&` binds tighter than `||`, both below comparisons
    assert_eq!(eval1("a < b && b < 4"), 1.0);
    assert_eq!(eval1("a > b && b < 4"), 0.0);
    assert_eq!(eval1("a > b || b < 4"), 1.0);
    assert_eq!(eval1("a > b || b > 4"), 0.0);
    assert_eq!(eval1("a == 2 || a == 9 && b == 9"), 1.0);
    assert_eq!(eval1("(a == 2 || a == 9) && b == 9"), 0.0);
    assert_eq!(eval1("max(a > 1 && b > 1, 0)"), 1.0);
    assert!(Expr::parse("a & b").unwrap_err().message.contains("`&&`"));
    assert!(Expr::parse("a | b").unwrap_err().message.contains("`||`"));
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

/// Evaluates `text` over three rows: numeric `a`, `zone`; text `district`
/// (the third cell missing), `home`, `label`.
fn eval_text(text: &str) -> Result<Vec<f64>, String> {
    let numbers = [
        ("a", vec![2.0, 3.0, 4.0]),
        ("zone", vec![1.0, 3.0, f64::NAN]),
    ];
    let some = |x: &str| Some(x.to_string());
    let texts = [
        ("district", vec![some("east"), some("west"), None]),
        ("home", vec![some("east"), some("east"), None]),
        ("label", vec![some("it's"), some("its"), some("")]),
    ];
    let e = Expr::parse(text).map_err(|e| e.to_string())?;
    let num = |c: &str| numbers.iter().find(|x| x.0 == c).map(|x| x.1.as_slice());
    let txt = |c: &str| texts.iter().find(|x| x.0 == c).map(|x| x.1.as_slice());
    e.eval_with_text(&num, &txt, 3)
}

#[test]
fn text_values_parse_into_the_tree_with_doubled_quotes() {
    let e = Expr::parse("district == 'east'").unwrap();
    let want = Expr::Bin(
        BinOp::Eq,
        Box::new(Expr::Col("district".into())),
        Box::new(Expr::Text("east".into())),
    );
    assert_eq!(e, want);
    let e = Expr::parse("'it''s' != label").unwrap();
    let Expr::Bin(BinOp::Ne, a, _) = e else {
        panic!("not a comparison")
    };
    assert_eq!(*a, Expr::Text("it's".into()));
    // an empty value and spaces are kept as written
    let e = Expr::parse("label == ''").unwrap();
    assert_eq!(e.text_columns(), vec!["label".to_string()]);
    let e = Expr::parse("label == ' a b '").unwrap();
    assert!(matches!(e, Expr::Bin(_, _, b) if *b == Expr::Text(" a b ".into())));
}

#[test]
fn text_comparisons_give_one_and_zero_and_missing_is_unequal() {
    // Common practice: a missing cell equals nothing, so `==` gives 0 and `!=` 1.
    assert_eq!(eval_text("district == 'east'").unwrap(), [1.0, 0.0, 0.0]);
    assert_eq!(eval_text("'east' == district").unwrap(), [1.0, 0.0, 0.0]);
    assert_eq!(eval_text("district != 'east'").unwrap(), [0.0, 1.0, 1.0]);
    assert_eq!(eval_text("district == 'East'").unwrap(), [0.0, 0.0, 0.0]);
    assert_eq!(eval_text("label == 'it''s'").unwrap(), [1.0, 0.0, 0.0]);
    // two text columns; missing on both sides is still unequal
    assert_eq!(eval_text("district == home").unwrap(), [1.0, 0.0, 0.0]);
    assert_eq!(eval_text("home != district").unwrap(), [0.0, 1.0, 1.0]);
    // inside arithmetic and beside numeric comparisons
    assert_eq!(
        eval_text("(district == 'west') * a + (a > 3)").unwrap(),
        [0.0, 3.0, 1.0]
    );
    // a numeric column against a text value that reads as a number
    assert_eq!(eval_text("zone == '3'").unwrap(), [0.0, 1.0, 0.0]);
    assert_eq!(eval_text("zone != ' 1 '").unwrap(), [0.0, 1.0, 1.0]);
}

#[test]
fn text_columns_are_those_compared_with_a_text_value() {
    let e = Expr::parse("(a > 1) * ('x' != b) + (c == 'y') * (b == d) + e").unwrap();
    assert_eq!(e.columns(), ["a", "b", "c", "d", "e"]);
    assert_eq!(e.text_columns(), ["b", "c"]);
    assert!(Expr::parse("a == b").unwrap().text_columns().is_empty());
}

#[test]
fn misplaced_text_values_are_refused_at_their_character() {
    for (text, position, says) in [
        ("'east'", 0, "not an expression on its own"),
        (
            "district + 'east'",
            11,
            "only be compared with `==` or `!=` to a column",
        ),
        ("district < 'east'", 11, "not `<`"),
        ("'a' >= district", 0, "not `>=`"),
        ("-'east' == district", 1, "only be compared"),
        ("log('east')", 4, "only be compared"),
        ("'east' == 'east'", 0, "two text values"),
        ("a == 1 + 'x'", 9, "only be compared"),
        ("a + 1 == 'x'", 9, "not to a calculation"),
        ("(a) == 'x' ", 7, "ok"),
        ("a == 'x' + 1", 5, "only be compared"),
        ("district == 'east", 12, "unclosed '"),
        ("district == 'it''s", 12, "unclosed '"),
    ] {
        match Expr::parse(text) {
            Ok(_) => assert_eq!(says, "ok", "{text} parsed"),
            Err(e) => {
                assert_eq!(e.position, position, "{text}: {e}");
                assert!(e.message.contains(says), "{text}: {}", e.message);
                assert!(e.message.contains("'") || e.message.contains("`=="), "{e}");
                let at = format!("at character {}", position + 1);
                assert!(e.to_string().contains(&at), "{e}");
            }
        }
    }
}

#[test]
fn text_and_numbers_mixed_wrongly_are_refused_naming_the_column() {
    let e = eval_text("district + 1").unwrap_err();
    assert!(
        e.contains("`district` holds text") && e.contains("=="),
        "{e}"
    );
    let e = eval_text("district > 1").unwrap_err();
    assert!(e.contains("`district` holds text"), "{e}");
    let e = eval_text("district == 1").unwrap_err();
    assert!(e.contains("`district` holds text"), "{e}");
    let e = eval_text("zone == 'east'").unwrap_err();
    assert!(
        e.contains("`zone` holds numbers") && e.contains("'east'"),
        "{e}"
    );
    let e = eval_text("district == zone").unwrap_err();
    assert!(
        e.contains("`district` holds text and column `zone` numbers"),
        "{e}"
    );
    let e = eval_text("a != home").unwrap_err();
    assert!(
        e.contains("`home` holds text and column `a` numbers"),
        "{e}"
    );
    let e = eval_text("nowhere == 'x'").unwrap_err();
    assert!(e.contains("unknown column `nowhere`"), "{e}");
    let e = eval_text("district == nowhere").unwrap_err();
    assert!(e.contains("unknown column `nowhere`"), "{e}");
    // a tree built by hand with a text value where a number goes
    let e = Expr::Text("x".into()).eval(&|_| None, 1).unwrap_err();
    assert!(e.contains("'x' is not a number"), "{e}");
}

#[test]
fn eval_without_text_columns_is_unchanged() {
    // `eval` has no text lookup: a text value compares with a numeric column as a number.
    assert_eq!(eval1("a == '2'"), 1.0);
    assert_eq!(eval1("b != '3.0'"), 0.0);
    let e = Expr::parse("c == 'x'").unwrap();
    let lookup = |_: &str| None;
    assert_eq!(e.eval(&lookup, 1).unwrap_err(), "unknown column `c`");
}
