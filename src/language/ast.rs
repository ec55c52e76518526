//! The syntax tree of a model file, as written, with a source span on every node.
//!
//! Contract: the tree mirrors the file statement by statement. Names are still text; resolving
//! them (and every check of spec §5) is the job of `model::check`. Every expression node records
//! its nesting depth, and the parser never builds one deeper than
//! [`super::parser::MAX_EXPR_DEPTH`] (it puts [`ExprKind::TooDeep`] there instead), so every
//! recursive pass over the tree, dropping included, runs in bounded stack.
//!
//! Statements and expressions are boxed where the parser moves them: the LR parser's stack holds
//! one value per symbol, and small symbols keep parsing fast (see docs/performance.md).

use super::span::Span;

/// A name as written, with its place.
#[derive(Debug, Clone, PartialEq)]
pub struct Name<'a> {
    pub text: &'a str,
    pub span: Span,
}

/// A string literal (escapes resolved) with its place.
#[derive(Debug, Clone, PartialEq)]
pub struct StringLit {
    pub value: String,
    pub span: Span,
}

/// Binary operators as written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BinOp {
    Add,
    Sub,
    Mul,
    Div,
    Pow,
}

/// Built-in functions as written (`log` is kept apart from `ln` only so messages can quote it).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Func {
    Exp,
    Ln,
    Log,
    Log10,
    Sqrt,
    Abs,
    Sign,
    NormCdf,
    NormPdf,
    Min,
    Max,
}

impl Func {
    pub fn name(self) -> &'static str {
        match self {
            Func::Exp => "exp",
            Func::Ln => "ln",
            Func::Log => "log",
            Func::Log10 => "log10",
            Func::Sqrt => "sqrt",
            Func::Abs => "abs",
            Func::Sign => "sign",
            Func::NormCdf => "normcdf",
            Func::NormPdf => "normpdf",
            Func::Min => "min",
            Func::Max => "max",
        }
    }

    /// Number of arguments the function takes.
    pub fn arity(self) -> usize {
        match self {
            Func::Min | Func::Max => 2,
            _ => 1,
        }
    }
}

/// An expression node.
#[derive(Debug, Clone, PartialEq)]
pub struct Expr<'a> {
    pub kind: ExprKind<'a>,
    pub span: Span,
    /// Nesting depth (a leaf has depth 1).
    pub depth: u32,
}

#[derive(Debug, Clone, PartialEq)]
pub enum ExprKind<'a> {
    /// A numeric literal: its value and whether it was written as an integer (digits only).
    Number {
        value: f64,
        integer: bool,
    },
    /// A bare name.
    Name(&'a str),
    /// `name[index]`; the index is any expression here and is classified by the checker
    /// (`t`, `t+k`, `t-k`, `ss`).
    Indexed {
        name: Name<'a>,
        index: Box<Expr<'a>>,
    },
    /// The reserved word `t` (meaningful only inside a time index).
    Time,
    /// The reserved word `ss` (meaningful only as an index).
    SteadyMark,
    Neg(Box<Expr<'a>>),
    Binary(BinOp, Box<Expr<'a>>, Box<Expr<'a>>),
    /// A built-in function; the argument count is checked later.
    Call {
        func: Func,
        func_span: Span,
        args: Vec<Expr<'a>>,
    },
    /// `name(...)` where `name` is not a built-in function.
    UnknownCall {
        name: Name<'a>,
        args: Vec<Expr<'a>>,
    },
    /// Stands for an expression nested too deep (already reported).
    TooDeep,
}

impl<'a> Expr<'a> {
    /// Calls `visit` on every node, parents before children (recursive; depth is bounded).
    pub fn walk<'s>(&'s self, visit: &mut impl FnMut(&'s Expr<'a>)) {
        visit(self);
        match &self.kind {
            ExprKind::Indexed { index, .. } => index.walk(visit),
            ExprKind::Neg(a) => a.walk(visit),
            ExprKind::Binary(_, a, b) => {
                a.walk(visit);
                b.walk(visit);
            }
            ExprKind::Call { args, .. } | ExprKind::UnknownCall { args, .. } => {
                for a in args {
                    a.walk(visit);
                }
            }
            _ => {}
        }
    }
}

/// `[log] [predetermined] name ["label"]` in `endogenous` (the markers in either order).
#[derive(Debug, Clone, PartialEq)]
pub struct EndogenousDecl<'a> {
    pub log: Option<Span>,
    pub predetermined: Option<Span>,
    pub name: Name<'a>,
    /// Boxed to keep the parser's stack values small (see the module documentation).
    pub label: Option<Box<StringLit>>,
}

/// `name ["label"]` in `exogenous`.
#[derive(Debug, Clone, PartialEq)]
pub struct ExogenousDecl<'a> {
    pub name: Name<'a>,
    pub label: Option<StringLit>,
}

/// `name = expr ["label"]` in `parameters` (`value` is `None` for a bare `name ["label"]`).
#[derive(Debug, Clone, PartialEq)]
pub struct ParameterDecl<'a> {
    pub name: Name<'a>,
    pub value: Option<Box<Expr<'a>>>,
    pub label: Option<StringLit>,
    pub span: Span,
}

/// `[label:] lhs [= rhs]` in `equations`.
#[derive(Debug, Clone, PartialEq)]
pub struct EquationDecl<'a> {
    pub label: Option<Name<'a>>,
    pub lhs: Box<Expr<'a>>,
    pub rhs: Option<Box<Expr<'a>>>,
    pub span: Span,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CovarianceKind {
    Sd,
    Var,
    Corr,
}

/// `sd(e) = expr`, `var(e) = expr` or `corr(e1, e2) = expr`.
#[derive(Debug, Clone, PartialEq)]
pub struct CovarianceDecl<'a> {
    pub kind: CovarianceKind,
    /// One name for `sd` and `var`, two for `corr`.
    pub shocks: Vec<Name<'a>>,
    pub value: Box<Expr<'a>>,
    pub span: Span,
}

/// `[guess] name = expr` in `steady`.
#[derive(Debug, Clone, PartialEq)]
pub struct SteadyDecl<'a> {
    pub guess: Option<Span>,
    pub name: Name<'a>,
    pub value: Box<Expr<'a>>,
    pub span: Span,
}

/// `name = expr` in `options`.
#[derive(Debug, Clone, PartialEq)]
pub struct OptionDecl<'a> {
    pub name: Name<'a>,
    pub value: Box<Expr<'a>>,
    pub span: Span,
}

/// `name = expr ["label"]` in `observables` (spec §9).
#[derive(Debug, Clone, PartialEq)]
pub struct ObservableDecl<'a> {
    pub name: Name<'a>,
    pub value: Box<Expr<'a>>,
    pub label: Option<StringLit>,
    pub span: Span,
}

/// What a `priors` item is about: a name (a parameter) or `sd(name)` / `var(name)` (an innovation
/// or an observable's measurement error; `var` is parsed only to be reported).
#[derive(Debug, Clone, PartialEq)]
pub enum PriorTargetDecl<'a> {
    Name(Name<'a>),
    Scale {
        kind: CovarianceKind,
        name: Name<'a>,
        span: Span,
    },
}

/// `name = expr` inside a distribution's argument list.
#[derive(Debug, Clone, PartialEq)]
pub struct NamedArg<'a> {
    pub name: Name<'a>,
    pub value: Box<Expr<'a>>,
}

/// `target ~ dist(args) [in [lo, hi]]` in `priors` (spec §10). The distribution name, the
/// argument names and the word `in` are plain names here; the checker gives them their meaning.
#[derive(Debug, Clone, PartialEq)]
pub struct PriorDecl<'a> {
    pub target: PriorTargetDecl<'a>,
    pub distribution: Name<'a>,
    pub args: Vec<NamedArg<'a>>,
    /// Span of the distribution call `dist(...)`.
    pub call_span: Span,
    /// `in [lo, hi]`: the word (checked to be `in`), the bounds and the bracket's span.
    pub truncation: Option<Truncation<'a>>,
    pub span: Span,
}

/// `in [lo, hi]` after a prior's distribution.
#[derive(Debug, Clone, PartialEq)]
pub struct Truncation<'a> {
    pub word: Name<'a>,
    pub lo: Box<Expr<'a>>,
    pub hi: Box<Expr<'a>>,
    pub span: Span,
}

/// One item of `objective` (spec §11). The words `loss`, `discount`, `control` and `replaces` are
/// plain names to the parser (so they stay usable as names elsewhere); the checker checks them.
#[derive(Debug, Clone, PartialEq)]
pub enum ObjectiveDecl<'a> {
    /// `loss = expr` or `discount = expr` (the word is `name`).
    Assign {
        name: Name<'a>,
        value: Box<Expr<'a>>,
        span: Span,
    },
    /// `control NAME [replaces LABEL]` (the words are `keyword` and `replaces.0`).
    Control {
        keyword: Name<'a>,
        variable: Name<'a>,
        replaces: Option<(Name<'a>, Name<'a>)>,
        span: Span,
    },
}

impl ObjectiveDecl<'_> {
    pub fn span(&self) -> Span {
        match self {
            ObjectiveDecl::Assign { span, .. } | ObjectiveDecl::Control { span, .. } => *span,
        }
    }
}

/// One statement of the file.
#[derive(Debug, Clone, PartialEq)]
pub enum Statement<'a> {
    /// `title "..."` (the string is `None` when missing, already reported).
    Title {
        keyword: Span,
        text: Option<StringLit>,
    },
    /// A section keyword on its own line (`endogenous`, `parameters`, ...).
    SectionHeader {
        section: super::lexer::Section,
        keyword: Span,
    },
    Endogenous(Vec<EndogenousDecl<'a>>),
    Exogenous(Vec<ExogenousDecl<'a>>),
    Parameter(Box<ParameterDecl<'a>>),
    Equation(Box<EquationDecl<'a>>),
    Covariance(Box<CovarianceDecl<'a>>),
    Steady(Box<SteadyDecl<'a>>),
    Option(Box<OptionDecl<'a>>),
    Observable(Box<ObservableDecl<'a>>),
    Prior(Box<PriorDecl<'a>>),
    Objective(Box<ObjectiveDecl<'a>>),
    /// A statement that did not parse (already reported).
    Error,
}

/// A whole file: its statements in order.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct File<'a> {
    pub statements: Vec<Statement<'a>>,
}
