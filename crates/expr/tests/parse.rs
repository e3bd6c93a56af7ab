//! The grammar, spans, errors and limits of the formula language.

use incertus_expr::{parse, parse_with, print, print_tree, ErrorKind, Kind, Limits};

fn tree(src: &str) -> String {
    print_tree(&parse(src).unwrap_or_else(|e| panic!("{src}: {}", e.render(src))))
}

fn eval(src: &str) -> f64 {
    parse(src).unwrap().eval::<f64, _>(&|_: &str| None).unwrap()
}

#[test]
fn numbers_in_every_written_form() {
    for (text, value) in [
        ("12", 12.0),
        ("1.5", 1.5),
        (".5", 0.5),
        ("5.", 5.0),
        ("6.022e23", 6.022e23),
        ("6.022E+23", 6.022e23),
        ("1e-7", 1e-7),
        ("0.000125", 0.000125),
    ] {
        assert_eq!(parse(text).unwrap().as_num(), Some(value), "{text}");
    }
}

#[test]
fn unicode_names() {
    for name in ["α_s", "ε1", "rho_w", "_t", "Δθ", "µ0", "x2y"] {
        let e = parse(&format!("{name} + 1")).unwrap();
        assert_eq!(e.names(), [name]);
    }
}

#[test]
fn precedence_and_associativity() {
    // Conventions of mathematical writing (common practice, no published source).
    assert_eq!(tree("-x^2"), "(-(x ^ 2))");
    assert_eq!(tree("x^-2"), "(x ^ (-2))");
    assert_eq!(tree("a^b^c"), "(a ^ (b ^ c))");
    assert_eq!(tree("a - b - c"), "(a - b - c)");
    assert_eq!(tree("a/b/c"), "(a / b / c)");
    assert_eq!(tree("a + b*c^d"), "(a + (b * (c ^ d)))");
    assert_eq!(tree("-a*b"), "((-a) * b)");
    assert_eq!(tree("2**3"), "(2 ^ 3)");
    assert_eq!(tree("a·b × c ÷ d − e"), "((a * b * c / d) - e)");
    assert_eq!(eval("2^3^2"), 512.0);
    assert_eq!(eval("-2^2"), -4.0);
    assert_eq!(eval("(-2)^2"), 4.0);
    assert_eq!(eval("8/4/2"), 1.0);
    assert_eq!(eval("10 - 4 - 3"), 3.0);
    assert_eq!(eval("+3"), 3.0);
}

#[test]
fn whitespace_anywhere() {
    assert_eq!(tree("  atan2 ( y ,\tx )\n"), "atan2(y, x)");
    assert_eq!(tree("x\n*\ny"), "(x * y)");
}

#[test]
fn every_function_and_pi() {
    let f = parse(
        "sqrt(4)+cbrt(8)+exp(0)+ln(1)+log10(100)+log2(8)+sin(0)+cos(0)+tan(0)+asin(0)+acos(1)\
         +atan(0)+atan2(0,1)+sinh(0)+cosh(0)+tanh(0)+abs(-2)+hypot(3,4)+pow(2,3)+pi",
    )
    .unwrap();
    let v: f64 = f.eval(&|_: &str| None).unwrap();
    let want = 2.0
        + 2.0
        + 1.0
        + 0.0
        + 2.0
        + 3.0
        + 0.0
        + 1.0
        + 0.0
        + 0.0
        + 0.0
        + 0.0
        + 0.0
        + 0.0
        + 1.0
        + 0.0
        + 2.0
        + 5.0
        + 8.0
        + std::f64::consts::PI;
    assert!((v - want).abs() < 1e-12, "{v}");
}

#[test]
fn spans_cover_the_text_of_each_node() {
    let src = "a + sin(b*c)";
    let e = parse(src).unwrap();
    assert_eq!((e.span.start, e.span.end), (0, src.len()));
    let Kind::Sum(ts) = &e.kind else { panic!() };
    let call = &ts[1].expr;
    assert_eq!(&src[call.span.start..call.span.end], "sin(b*c)");
    let Kind::Call(_, args) = &call.kind else {
        panic!()
    };
    assert_eq!(&src[args[0].span.start..args[0].span.end], "b*c");
    // Byte spans with multi-byte names.
    let src = "α + β";
    let e = parse(src).unwrap();
    let Kind::Sum(ts) = &e.kind else { panic!() };
    assert_eq!(&src[ts[1].expr.span.start..ts[1].expr.span.end], "β");
}

/// Each bad formula, the fragment its message must contain, and the caret line.
#[test]
fn errors_name_the_problem_and_put_a_caret_under_it() {
    let cases: &[(&str, &str, &str)] = &[
        ("2*(x+", "expected a number, a name or '('", "     ^"),
        ("x +* y", "found `*`", "   ^"),
        (
            "x^2*sin(y",
            "expected ')' to close the '(' at column 8",
            "         ^",
        ),
        ("(x))", "has no matching '('", "   ^"),
        ("2 x", "expected an operator", "  ^"),
        ("x $ y", "unexpected character `$`", "  ^"),
        ("foo(x)", "unknown function `foo`", "^^^"),
        (
            "ln(x) + log(y)",
            "write ln for the natural logarithm",
            "        ^^^",
        ),
        ("atan2(x)", "`atan2` takes 2 arguments, found 1", "^^^^^^^^"),
        (
            "sqrt(x, y)",
            "`sqrt` takes 1 argument, found 2",
            "^^^^^^^^^^",
        ),
        ("sin + 1", "`sin` is a function", "^^^"),
        ("α + β ?", "unexpected character `?`", "      ^"),
        ("x, y", "belongs inside a function call", " ^"),
        ("1e400", "too large", "^^^^^"),
        ("   ", "empty", "^^^"),
    ];
    for (src, fragment, carets) in cases {
        let err = parse(src).expect_err(src);
        let text = err.render(src);
        assert!(err.message.contains(fragment), "{src}: {}", err.message);
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines.last().unwrap(), carets, "{src}:\n{text}");
    }
}

#[test]
fn long_formulas_show_a_window_around_the_error() {
    let src = format!("{} + (", "x + ".repeat(100));
    let err = parse(&src).unwrap_err();
    let text = err.render(&src);
    let lines: Vec<&str> = text.lines().collect();
    assert!(
        lines[1].starts_with("...") && lines[1].len() < 100,
        "{text}"
    );
    assert_eq!(lines[2].trim_start(), "^");
    assert_eq!(lines[2].len() - 1, lines[1].len(), "caret under the end");
}

#[test]
fn deep_nesting_is_an_error_not_a_stack_overflow() {
    // 50 000 nested parentheses, as the issue asks.
    let deep = format!("{}x{}", "(".repeat(50_000), ")".repeat(50_000));
    let err = parse(&deep).unwrap_err();
    assert_eq!(err.kind, ErrorKind::Limit);
    assert!(err.message.contains("256 levels"));
    // Signs, powers and calls nest too.
    for deep in [
        format!("{}x", "-".repeat(10_000)),
        format!("x{}", "^x".repeat(10_000)),
        format!("{}x{}", "sin(".repeat(10_000), ")".repeat(10_000)),
    ] {
        assert_eq!(parse(&deep).unwrap_err().kind, ErrorKind::Limit);
    }
    // 255 levels are fine.
    let ok = format!("{}x{}", "(".repeat(255), ")".repeat(255));
    assert!(parse(&ok).is_ok());
}

#[test]
fn long_flat_formulas_are_fine_and_shallow() {
    // A sum of 20 000 terms is one n-ary node: no depth problem anywhere.
    let src = (0..20_000)
        .map(|i| format!("x{}", i % 50))
        .collect::<Vec<_>>()
        .join(" + ");
    let e = parse(&src).unwrap();
    assert_eq!(e.depth(), 2);
    let d = incertus_expr::derivative(&e, "x7");
    assert_eq!(print(&d), "400");
}

#[test]
fn length_limit() {
    let limits = Limits {
        max_len: 100,
        ..Limits::default()
    };
    let err = parse_with(&"x+".repeat(60), limits).unwrap_err();
    assert_eq!(err.kind, ErrorKind::Limit);
    assert!(err.message.contains("limit is 100 bytes"));
}

#[test]
fn evaluation_errors_name_the_sub_formula() {
    let src = "a + sqrt(b - 4) * ln(c)";
    let f = parse(src).unwrap();
    let err = f
        .eval::<f64, _>(&[("a", 1.0), ("b", 1.0), ("c", 2.0)])
        .unwrap_err();
    assert_eq!(err.kind, ErrorKind::Domain);
    assert!(err.message.contains("square root of a negative"));
    assert!(err.render(src).ends_with("    ^^^^^^^^^^^"));
    let err = f
        .eval::<f64, _>(&[("a", 1.0), ("b", 5.0), ("c", 0.0)])
        .unwrap_err();
    assert!(err.message.contains("logarithm"), "{}", err.message);
    let err = parse("x/(y - y)")
        .unwrap()
        .eval::<f64, _>(&[("x", 1.0), ("y", 3.0)])
        .unwrap_err();
    assert!(err.message.contains("division by zero"));
    let err = f.eval::<f64, _>(&[("a", 1.0)]).unwrap_err();
    assert_eq!(err.kind, ErrorKind::Name);
    assert!(err.message.contains("`b`"));
    let err = parse("exp(x)")
        .unwrap()
        .eval::<f64, _>(&[("x", 1000.0)])
        .unwrap_err();
    assert!(err.message.contains("overflow"));
    let err = parse("(-8)^(1/3)")
        .unwrap()
        .eval::<f64, _>(&|_: &str| None)
        .unwrap_err();
    assert!(err.message.contains("non-integer power"));
}

#[test]
fn evaluation_on_f32() {
    let f = parse("x^2 + 1").unwrap();
    let v: f32 = f.eval(&[("x", 2.0f32)]).unwrap();
    assert_eq!(v, 5.0);
}
