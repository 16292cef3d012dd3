//! The term syntax: what a user types to name the columns of a model.
//!
//! ```text
//! terms   := term ("," term)*
//! term    := factor ("*" factor)*          product of the factors' columns
//! factor  := atom ("^" K)?                 K = 2..10, a raw polynomial power
//! atom    := NAME | "quoted name"
//!          | log(term) | sqrt(term)
//!          | boxcox(term, λ) | yeojohnson(term, λ)
//!          | cat(NAME) | cat(NAME, ref=LEVEL)
//!          | "(" term ")"
//! ```
//!
//! A bare NAME starts with a letter or `_` and holds letters, digits, `_` and
//! `.`; any other name is written in double quotes, with `""` for a quote.

use std::fmt;

/// One term of a model, as parsed.
#[derive(Clone, Debug, PartialEq)]
pub enum Term {
    Column(String),
    Log(Box<Term>),
    Sqrt(Box<Term>),
    Power(Box<Term>, u32),
    /// Box–Cox transform with a given λ.
    BoxCox(Box<Term>, f64),
    /// Yeo–Johnson transform with a given λ.
    YeoJohnson(Box<Term>, f64),
    /// Treatment-coded dummies of a column; `reference` is the omitted level.
    Cat { column: String, reference: Option<String> },
    Product(Box<Term>, Box<Term>),
}

/// Why a term list could not be read.
#[derive(Clone, Debug, PartialEq)]
pub struct TermError {
    /// The text that was being read.
    pub text: String,
    /// 0-based character position of the problem.
    pub position: usize,
    pub message: String,
}

impl fmt::Display for TermError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "Could not read \"{}\" at character {}: {}", self.text, self.position + 1, self.message)
    }
}

impl std::error::Error for TermError {}

impl Term {
    /// Every column name the term reads.
    pub fn columns(&self) -> Vec<&str> {
        let mut out = Vec::new();
        self.collect_columns(&mut out);
        out
    }

    fn collect_columns<'a>(&'a self, out: &mut Vec<&'a str>) {
        match self {
            Term::Column(c) | Term::Cat { column: c, .. } => {
                if !out.contains(&c.as_str()) {
                    out.push(c)
                }
            }
            Term::Log(t) | Term::Sqrt(t) | Term::Power(t, _) | Term::BoxCox(t, _) | Term::YeoJohnson(t, _) => {
                t.collect_columns(out)
            }
            Term::Product(a, b) => {
                a.collect_columns(out);
                b.collect_columns(out);
            }
        }
    }

    /// True when the term (or a factor of it) is a category.
    pub fn has_category(&self) -> bool {
        match self {
            Term::Cat { .. } => true,
            Term::Column(_) => false,
            Term::Log(t) | Term::Sqrt(t) | Term::Power(t, _) | Term::BoxCox(t, _) | Term::YeoJohnson(t, _) => {
                t.has_category()
            }
            Term::Product(a, b) => a.has_category() || b.has_category(),
        }
    }
}

/// Writes a column name, quoting it when it is not a bare name.
pub fn quote_name(name: &str) -> String {
    let bare = name.chars().next().is_some_and(|c| c.is_alphabetic() || c == '_')
        && name.chars().all(|c| c.is_alphanumeric() || c == '_' || c == '.')
        && !matches!(name, "log" | "sqrt" | "cat" | "boxcox" | "yeojohnson");
    if bare {
        name.to_string()
    } else {
        format!("\"{}\"", name.replace('"', "\"\""))
    }
}

impl fmt::Display for Term {
    /// The canonical text of a term, which parses back to the same term.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Term::Column(c) => write!(f, "{}", quote_name(c)),
            Term::Log(t) => write!(f, "log({t})"),
            Term::Sqrt(t) => write!(f, "sqrt({t})"),
            Term::BoxCox(t, l) => write!(f, "boxcox({t}, {l})"),
            Term::YeoJohnson(t, l) => write!(f, "yeojohnson({t}, {l})"),
            Term::Power(t, k) => match **t {
                Term::Product(..) | Term::Power(..) => write!(f, "({t})^{k}"),
                _ => write!(f, "{t}^{k}"),
            },
            Term::Cat { column, reference: None } => write!(f, "cat({})", quote_name(column)),
            Term::Cat { column, reference: Some(r) } => write!(f, "cat({}, ref={})", quote_name(column), quote_level(r)),
            // Products read left to right, so a right-hand product needs brackets.
            Term::Product(a, b) => match **b {
                Term::Product(..) => write!(f, "{a}*({b})"),
                _ => write!(f, "{a}*{b}"),
            },
        }
    }
}

/// Writes a level bare when it reads back as one token (a name, or a
/// plain number), and quoted otherwise.
fn quote_level(level: &str) -> String {
    let mut chars = level.chars();
    let name = chars.next().is_some_and(|c| c.is_alphabetic() || c == '_') && chars.all(|c| c.is_alphanumeric() || c == '_' || c == '.');
    let number = level.chars().next().is_some_and(|c| c.is_ascii_digit() || c == '-' || c == '+')
        && level.chars().skip(1).all(|c| c.is_ascii_alphanumeric() || c == '.' || c == '_');
    if name || number {
        level.to_string()
    } else {
        format!("\"{}\"", level.replace('"', "\"\""))
    }
}

/// Parses a comma-separated list of terms. An empty or blank text is an
/// empty list (a model with the intercept only).
pub fn parse_terms(text: &str) -> Result<Vec<Term>, TermError> {
    let mut p = Parser::new(text)?;
    let mut terms = Vec::new();
    if p.peek() == &Tok::End {
        return Ok(terms);
    }
    loop {
        terms.push(p.term()?);
        match p.peek() {
            Tok::Comma => {
                p.bump();
            }
            Tok::End => return Ok(terms),
            Tok::Number(n) if n.starts_with(['+', '-']) => {
                return Err(p.error(
                    "terms are separated by commas, not + or -; put names with spaces or symbols in double quotes",
                ))
            }
            _ => return Err(p.error("expected a comma between terms")),
        }
    }
}

/// Parses exactly one term (for the response).
pub fn parse_term(text: &str) -> Result<Term, TermError> {
    let mut p = Parser::new(text)?;
    if p.peek() == &Tok::End {
        return Err(p.error("expected a column name"));
    }
    let t = p.term()?;
    if p.peek() != &Tok::End {
        return Err(p.error("expected the end of the term here"));
    }
    Ok(t)
}

#[derive(Clone, Debug, PartialEq)]
enum Tok {
    Name(String),
    Quoted(String),
    Number(String),
    LParen,
    RParen,
    Comma,
    Star,
    Caret,
    Equals,
    End,
}

struct Parser {
    text: String,
    toks: Vec<(Tok, usize)>,
    at: usize,
}

impl Parser {
    fn new(text: &str) -> Result<Parser, TermError> {
        let chars: Vec<char> = text.chars().collect();
        let mut toks = Vec::new();
        let mut i = 0;
        let err = |pos: usize, msg: &str| TermError { text: text.to_string(), position: pos, message: msg.to_string() };
        while i < chars.len() {
            let c = chars[i];
            let start = i;
            let tok = match c {
                c if c.is_whitespace() => {
                    i += 1;
                    continue;
                }
                '(' => Tok::LParen,
                ')' => Tok::RParen,
                ',' => Tok::Comma,
                '*' => Tok::Star,
                '^' => Tok::Caret,
                '=' => Tok::Equals,
                '"' => {
                    let mut s = String::new();
                    i += 1;
                    loop {
                        match chars.get(i) {
                            None => return Err(err(start, "this quoted name is never closed")),
                            Some('"') if chars.get(i + 1) == Some(&'"') => {
                                s.push('"');
                                i += 2;
                            }
                            Some('"') => break,
                            Some(&ch) => {
                                s.push(ch);
                                i += 1;
                            }
                        }
                    }
                    if s.is_empty() {
                        return Err(err(start, "a quoted name cannot be empty"));
                    }
                    Tok::Quoted(s)
                }
                c if c.is_ascii_digit() || c == '-' || c == '+' => {
                    let mut s = String::from(c);
                    i += 1;
                    while let Some(&ch) = chars.get(i) {
                        if ch.is_alphanumeric() || matches!(ch, '.' | '_') {
                            s.push(ch);
                            i += 1;
                        } else {
                            break;
                        }
                    }
                    toks.push((Tok::Number(s), start));
                    continue;
                }
                c if c.is_alphabetic() || c == '_' => {
                    let mut s = String::new();
                    while let Some(&ch) = chars.get(i) {
                        if ch.is_alphanumeric() || ch == '_' || ch == '.' {
                            s.push(ch);
                            i += 1;
                        } else {
                            break;
                        }
                    }
                    toks.push((Tok::Name(s), start));
                    continue;
                }
                other => {
                    return Err(err(
                        start,
                        &format!("'{other}' cannot appear in a name; put names with spaces or symbols in double quotes"),
                    ))
                }
            };
            toks.push((tok, start));
            i += 1;
        }
        toks.push((Tok::End, chars.len()));
        Ok(Parser { text: text.to_string(), toks, at: 0 })
    }

    fn peek(&self) -> &Tok {
        &self.toks[self.at].0
    }

    fn bump(&mut self) -> Tok {
        let t = self.toks[self.at].0.clone();
        if self.at + 1 < self.toks.len() {
            self.at += 1;
        }
        t
    }

    fn error(&self, message: &str) -> TermError {
        TermError { text: self.text.clone(), position: self.toks[self.at].1, message: message.to_string() }
    }

    fn expect(&mut self, tok: Tok, what: &str) -> Result<(), TermError> {
        if self.peek() == &tok {
            self.bump();
            Ok(())
        } else {
            Err(self.error(&format!("expected {what}")))
        }
    }

    fn term(&mut self) -> Result<Term, TermError> {
        let mut t = self.factor()?;
        while self.peek() == &Tok::Star {
            self.bump();
            let rhs = self.factor()?;
            t = Term::Product(Box::new(t), Box::new(rhs));
        }
        Ok(t)
    }

    fn factor(&mut self) -> Result<Term, TermError> {
        let atom = self.atom()?;
        if self.peek() != &Tok::Caret {
            return Ok(atom);
        }
        let caret = self.at;
        self.bump();
        let k = match self.bump() {
            Tok::Number(s) => s.parse::<u32>().ok(),
            _ => None,
        };
        match k {
            Some(k @ 2..=10) if !atom.has_category() => Ok(Term::Power(Box::new(atom), k)),
            Some(2..=10) => {
                self.at = caret;
                Err(self.error("a category cannot be raised to a power"))
            }
            _ => {
                self.at = caret;
                Err(self.error("a power must be a whole number from 2 to 10"))
            }
        }
    }

    fn atom(&mut self) -> Result<Term, TermError> {
        let tok = self.peek().clone();
        match tok {
            Tok::Quoted(s) => {
                self.bump();
                Ok(Term::Column(s))
            }
            Tok::Name(s) => {
                self.bump();
                if self.peek() != &Tok::LParen {
                    return Ok(Term::Column(s));
                }
                match s.as_str() {
                    "log" | "sqrt" => {
                        self.bump();
                        let inner = self.term()?;
                        if inner.has_category() {
                            return Err(self.error(&format!("{s}() needs a number, not a category")));
                        }
                        self.expect(Tok::RParen, "a closing ')'")?;
                        Ok(if s == "log" { Term::Log(Box::new(inner)) } else { Term::Sqrt(Box::new(inner)) })
                    }
                    "boxcox" | "yeojohnson" => {
                        self.bump();
                        let inner = self.term()?;
                        if inner.has_category() {
                            return Err(self.error(&format!("{s}() needs a number, not a category")));
                        }
                        self.expect(Tok::Comma, &format!("a comma and then λ, as in {s}(x, 0.5)"))?;
                        let lambda = match self.bump() {
                            Tok::Number(n) => n.parse::<f64>().ok().filter(|v| v.is_finite() && v.abs() <= 100.0),
                            _ => None,
                        };
                        let Some(lambda) = lambda else {
                            self.at -= 1;
                            return Err(self.error("λ must be a number between -100 and 100"));
                        };
                        self.expect(Tok::RParen, "a closing ')'")?;
                        Ok(if s == "boxcox" {
                            Term::BoxCox(Box::new(inner), lambda)
                        } else {
                            Term::YeoJohnson(Box::new(inner), lambda)
                        })
                    }
                    "cat" => {
                        self.bump();
                        let column = match self.bump() {
                            Tok::Name(c) | Tok::Quoted(c) => c,
                            _ => {
                                self.at -= 1;
                                return Err(self.error("cat() takes a column name"));
                            }
                        };
                        let mut reference = None;
                        if self.peek() == &Tok::Comma {
                            self.bump();
                            match self.bump() {
                                Tok::Name(r) if r == "ref" => {}
                                _ => {
                                    self.at -= 1;
                                    return Err(self.error("expected ref=LEVEL after the column name in cat()"));
                                }
                            }
                            self.expect(Tok::Equals, "'=' after ref")?;
                            reference = match self.bump() {
                                Tok::Name(l) | Tok::Quoted(l) | Tok::Number(l) => Some(l),
                                _ => {
                                    self.at -= 1;
                                    return Err(self.error("expected the reference level after ref="));
                                }
                            };
                        }
                        self.expect(Tok::RParen, "a closing ')'")?;
                        Ok(Term::Cat { column, reference })
                    }
                    other => Err(self.error(&format!(
                        "there is no function called {other}(); the functions are log(), sqrt(), boxcox(), yeojohnson() and cat()"
                    ))),
                }
            }
            Tok::LParen => {
                self.bump();
                let t = self.term()?;
                self.expect(Tok::RParen, "a closing ')'")?;
                Ok(t)
            }
            Tok::Number(n) => Err(self.error(&format!(
                "\"{n}\" is not a column name; a name that starts with a digit goes in double quotes"
            ))),
            Tok::End => Err(self.error("expected a column name, but the text ends here")),
            _ => Err(self.error("expected a column name")),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn check(input: &str, expected: &[&str]) {
        let terms = parse_terms(input).unwrap_or_else(|e| panic!("{e}"));
        let shown: Vec<String> = terms.iter().map(|t| t.to_string()).collect();
        assert_eq!(shown, expected, "terms of {input:?}");
        // The canonical text parses back to the same terms.
        let again = parse_terms(&shown.join(", ")).unwrap();
        assert_eq!(again, terms);
    }

    fn check_error(input: &str, position: usize, fragment: &str) {
        let e = parse_terms(input).expect_err(input);
        assert_eq!(e.position, position, "position for {input:?}: {e}");
        assert!(e.message.contains(fragment), "message for {input:?}: {e}");
    }

    #[test]
    fn every_kind_of_term() {
        check("x", &["x"]);
        check("", &[]);
        check(" log(area) , sqrt(n), x^2, x ^ 10", &["log(area)", "sqrt(n)", "x^2", "x^10"]);
        check("cat(zone), cat(zone, ref=3), cat(\"hvac type\", ref=\"gas boiler\")", &[
            "cat(zone)",
            "cat(zone, ref=3)",
            "cat(\"hvac type\", ref=\"gas boiler\")",
        ]);
        check("a*b, cat(g)*x, log(a)*b^2", &["a*b", "cat(g)*x", "log(a)*b^2"]);
        check("\"floor area (m2)\", \"say \"\"hi\"\"\"", &["\"floor area (m2)\"", "\"say \"\"hi\"\"\""]);
        check("(a*b)^2", &["(a*b)^2"]);
        // Found by fuzzing: these must print in a form that reads back.
        check("(a^2)^3, a*(b*c), cat(g, ref=\".a\"), cat(g, ref=\"a+b\")", &["(a^2)^3", "a*(b*c)", "cat(g, ref=\".a\")", "cat(g, ref=\"a+b\")"]);
        check("boxcox(area, 0.25), yeojohnson(x, -1.5)", &["boxcox(area, 0.25)", "yeojohnson(x, -1.5)"]);
    }

    #[test]
    fn mistakes_are_located() {
        check_error("x, ", 3, "expected a column name");
        check_error("x^1", 1, "from 2 to 10");
        check_error("x^11", 1, "from 2 to 10");
        check_error("exp(x)", 3, "no function called exp");
        check_error("floor area", 6, "expected a comma");
        check_error("a + b", 2, "separated by commas, not + or -");
        check_error("\"open", 0, "never closed");
        check_error("cat(g)^2", 6, "category cannot be raised");
        check_error("log(cat(g))", 10, "needs a number");
        check_error("2019", 0, "starts with a digit");
        check_error("boxcox(x)", 8, "a comma and then λ");
        check_error("boxcox(x, big)", 10, "λ must be a number");
    }
}
