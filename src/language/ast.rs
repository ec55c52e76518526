//! The syntax tree of a model file, as written, with a source span on every node.
//!
//! Contract: the tree mirrors the file statement by statement. Names are still text; resolving
//! them (and every check of spec §5) is the job of `model::check`. Every expression node records
//! its nesting depth, and the parser never builds one deeper than
//! [`crate::model::MAX_EXPR_DEPTH`] (it puts [`ExprKind::TooDeep`] there instead), so every
//! recursive pass over the tree, dropping included, runs in bounded stack.

use super::span::Span;

/// A name as written, with its place.
#[derive(Debug, Clone, PartialEq)]
pub struct Name {
    pub text: String,
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
pub struct Expr {
    pub kind: ExprKind,
    pub span: Span,
    /// Nesting depth (a leaf has depth 1).
    pub depth: u32,
}

#[derive(Debug, Clone, PartialEq)]
pub enum ExprKind {
    /// A numeric literal: its value and whether it was written as an integer (digits only).
    Number {
        value: f64,
        integer: bool,
    },
    /// A bare name.
    Name(String),
    /// `name[index]`; the index is any expression here and is classified by the checker
    /// (`t`, `t+k`, `t-k`, `ss`).
    Indexed {
        name: Name,
        index: Box<Expr>,
    },
    /// The reserved word `t` (meaningful only inside a time index).
    Time,
    /// The reserved word `ss` (meaningful only as an index).
    SteadyMark,
    Neg(Box<Expr>),
    Binary(BinOp, Box<Expr>, Box<Expr>),
    /// A built-in function; the argument count is checked later.
    Call {
        func: Func,
        func_span: Span,
        args: Vec<Expr>,
    },
    /// `name(...)` where `name` is not a built-in function.
    UnknownCall {
        name: Name,
        args: Vec<Expr>,
    },
    /// Stands for an expression nested too deep (already reported).
    TooDeep,
}

impl Expr {
    /// Calls `visit` on every node, parents before children (recursive; depth is bounded).
    pub fn walk<'a>(&'a self, visit: &mut impl FnMut(&'a Expr)) {
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

/// `[log] name ["label"]` in `endogenous`.
#[derive(Debug, Clone, PartialEq)]
pub struct EndogenousDecl {
    pub log: Option<Span>,
    pub name: Name,
    pub label: Option<StringLit>,
}

/// `name ["label"]` in `exogenous`.
#[derive(Debug, Clone, PartialEq)]
pub struct ExogenousDecl {
    pub name: Name,
    pub label: Option<StringLit>,
}

/// `name = expr ["label"]` in `parameters` (`value` is `None` for a bare `name ["label"]`).
#[derive(Debug, Clone, PartialEq)]
pub struct ParameterDecl {
    pub name: Name,
    pub value: Option<Expr>,
    pub label: Option<StringLit>,
    pub span: Span,
}

/// `[label:] lhs [= rhs]` in `equations`.
#[derive(Debug, Clone, PartialEq)]
pub struct EquationDecl {
    pub label: Option<Name>,
    pub lhs: Expr,
    pub rhs: Option<Expr>,
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
pub struct CovarianceDecl {
    pub kind: CovarianceKind,
    /// One name for `sd` and `var`, two for `corr`.
    pub shocks: Vec<Name>,
    pub value: Expr,
    pub span: Span,
}

/// `[guess] name = expr` in `steady`.
#[derive(Debug, Clone, PartialEq)]
pub struct SteadyDecl {
    pub guess: Option<Span>,
    pub name: Name,
    pub value: Expr,
    pub span: Span,
}

/// `name = expr` in `options`.
#[derive(Debug, Clone, PartialEq)]
pub struct OptionDecl {
    pub name: Name,
    pub value: Expr,
    pub span: Span,
}

/// One statement of the file.
#[derive(Debug, Clone, PartialEq)]
pub enum Statement {
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
    Endogenous(Vec<EndogenousDecl>),
    Exogenous(Vec<ExogenousDecl>),
    Parameter(ParameterDecl),
    Equation(EquationDecl),
    Covariance(CovarianceDecl),
    Steady(SteadyDecl),
    Option(OptionDecl),
    /// A statement that did not parse (already reported).
    Error,
}

/// A whole file: its statements in order.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct File {
    pub statements: Vec<Statement>,
}
