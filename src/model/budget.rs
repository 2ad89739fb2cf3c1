//! The flow budget: what entered and what left the model through each condition (and storage),
//! and how well the two balance.

use std::fmt;

use super::spec::ConditionId;
use crate::format::Sig4;
use crate::Error;

/// The kind of a budget term.
///
/// ```
/// use quintet::model::FlowKind;
/// assert_eq!(FlowKind::Exchange.to_string(), "exchange");
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
#[non_exhaustive]
pub enum FlowKind {
    /// Through cells or edges held at a prescribed value.
    PrescribedValue,
    /// Through edges with a prescribed flux.
    PrescribedFlux,
    /// Exchange with an outside value through a conductance (convection, river, drain).
    Exchange,
    /// Point sources and sinks (wells, heaters).
    PointSource,
    /// Sources per unit plan area (recharge).
    ArealSource,
    /// Sources per unit volume (heat generation).
    VolumetricSource,
    /// Sources given cell by cell in the right-hand side of a system assembled outside the
    /// model, net of any part of a row's center beyond the sum of its couplings (an exchange
    /// folded into the center); see [`SystemBudget`](crate::SystemBudget).
    CellSource,
    /// Carried by a model's flow field ([`Model::set_advection`](super::Model::set_advection)):
    /// into the model through an edge at an inflow value ([`Model::inflow_value`](super::Model::inflow_value)),
    /// and out of it with the cell's own value (through edges, or where the fluid leaves or
    /// appears inside a cell).
    Carried,
    /// Release from (entering) or uptake into (leaving) storage during a time step.
    Storage,
}

impl fmt::Display for FlowKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.pad(match self {
            FlowKind::PrescribedValue => "prescribed value",
            FlowKind::PrescribedFlux => "prescribed flux",
            FlowKind::Exchange => "exchange",
            FlowKind::PointSource => "point source",
            FlowKind::ArealSource => "areal source",
            FlowKind::VolumetricSource => "volumetric source",
            FlowKind::CellSource => "cell source",
            FlowKind::Carried => "carried by flow",
            FlowKind::Storage => "storage",
        })
    }
}

/// One term of a budget: the flow that entered and the flow that left the model through one
/// condition, both as positive numbers, in W (heat) or m³/s (groundwater). Each cell of the
/// condition counts its net flow as entering or leaving.
///
/// ```
/// use quintet::model::{BudgetLine, FlowKind};
/// let line = BudgetLine { label: "river".into(), kind: FlowKind::Exchange, inflow: 3.0, outflow: 1.0 };
/// assert_eq!(line.net(), 2.0);
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct BudgetLine {
    /// The condition's label (or `"storage"`).
    pub label: String,
    /// Its kind.
    pub kind: FlowKind,
    /// Flow into the model, W or m³/s (≥ 0).
    pub inflow: f64,
    /// Flow out of the model, W or m³/s (≥ 0).
    pub outflow: f64,
}

impl BudgetLine {
    /// Inflow minus outflow.
    ///
    /// ```
    /// # use quintet::model::{BudgetLine, FlowKind};
    /// let line = BudgetLine { label: "well".into(), kind: FlowKind::PointSource, inflow: 0.0, outflow: 0.5 };
    /// assert_eq!(line.net(), -0.5);
    /// ```
    pub fn net(&self) -> f64 {
        self.inflow - self.outflow
    }
}

/// A flow budget has an imbalance larger than the caller's threshold: the run should not be
/// trusted until the cause is found (a loose stopping tolerance, most often).
///
/// ```
/// use quintet::model::BudgetWarning;
/// let w = BudgetWarning { imbalance_percent: 2.5, threshold_percent: 1.0 };
/// assert!(w.to_string().contains("2.5"));
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BudgetWarning {
    /// The imbalance found, `100·(in − out)/((in + out)/2)`.
    pub imbalance_percent: f64,
    /// The threshold it exceeds, in percent.
    pub threshold_percent: f64,
}

impl fmt::Display for BudgetWarning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "flow budget imbalance {} % exceeds the {} % allowed",
            Sig4(self.imbalance_percent),
            Sig4(self.threshold_percent)
        )
    }
}

/// What entered and left the model, term by term, after a steady solve or over one time step.
///
/// Line `n` belongs to the condition whose [`ConditionId`] has index `n`; a model with a flow
/// field ([`Model::set_advection`](super::Model::set_advection)) has one more line after the
/// conditions, "carried by the flow field" (kind [`FlowKind::Carried`]); a transient budget
/// has one more line, for storage, at the end. The percent imbalance is
/// `100·(in − out)/((in + out)/2)`; after a converged solve it measures the algebraic error
/// left by the stopping tolerance (the discrete equations conserve exactly). A common practice
/// in groundwater modelling is to distrust runs above about 1 %.
///
/// # Example
///
/// ```
/// use quintet::model::{Budget, BudgetLine, FlowKind};
///
/// let budget = Budget::from_lines(vec![
///     BudgetLine { label: "rain".into(), kind: FlowKind::ArealSource, inflow: 10.0, outflow: 0.0 },
///     BudgetLine { label: "sea".into(), kind: FlowKind::PrescribedValue, inflow: 0.0, outflow: 9.0 },
/// ]);
/// assert_eq!((budget.total_in, budget.total_out), (10.0, 9.0));
/// assert!((budget.imbalance_percent() - 100.0 / 9.5).abs() < 1e-12);
/// assert!(budget.warning(1.0).is_some());
/// println!("{}", budget.table("m³/s"));
/// ```
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub struct Budget {
    /// One line per condition (then storage, for a time step).
    pub lines: Vec<BudgetLine>,
    /// Sum of all inflows.
    pub total_in: f64,
    /// Sum of all outflows.
    pub total_out: f64,
}

impl Budget {
    /// A budget from its lines (totals summed in line order).
    ///
    /// ```
    /// let b = quintet::model::Budget::from_lines(Vec::new());
    /// assert_eq!(b.imbalance_percent(), 0.0);
    /// ```
    pub fn from_lines(lines: Vec<BudgetLine>) -> Budget {
        let total_in = lines.iter().map(|l| l.inflow).sum(); // local: lines are totals
        let total_out = lines.iter().map(|l| l.outflow).sum(); // local: lines are totals
        Budget {
            lines,
            total_in,
            total_out,
        }
    }

    /// Total in minus total out.
    ///
    /// ```
    /// # use quintet::model::{Budget, BudgetLine, FlowKind};
    /// let b = Budget::from_lines(vec![BudgetLine { label: "a".into(), kind: FlowKind::PointSource, inflow: 2.0, outflow: 0.5 }]);
    /// assert_eq!(b.net(), 1.5);
    /// ```
    pub fn net(&self) -> f64 {
        self.total_in - self.total_out
    }

    /// `100·(in − out)/((in + out)/2)`, in percent (0 when nothing flows).
    ///
    /// ```
    /// # use quintet::model::{Budget, BudgetLine, FlowKind};
    /// let b = Budget::from_lines(vec![BudgetLine { label: "a".into(), kind: FlowKind::PointSource, inflow: 3.0, outflow: 1.0 }]);
    /// assert_eq!(b.imbalance_percent(), 100.0);
    /// ```
    pub fn imbalance_percent(&self) -> f64 {
        let mean = 0.5 * (self.total_in + self.total_out);
        if mean > 0.0 {
            100.0 * self.net() / mean
        } else {
            0.0
        }
    }

    /// The line of condition `id`, if the budget has one.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// let sink = model.prescribe_cells("sink", [0], 0.0)?;
    /// let heater = model.point_source("heater", 2, 5.0)?;
    /// let system = model.assemble()?;
    /// let mut t = system.initial_solution(0.0);
    /// system.solve(&mut quintet::Cg::default(), &mut t, &mut quintet::Workspace::new())?;
    /// let budget = system.budget(&t)?;
    /// assert_eq!(budget.line(heater).map(|l| l.inflow), Some(5.0));
    /// assert!((budget.line(sink).map_or(0.0, |l| l.outflow) - 5.0).abs() < 1e-7);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn line(&self, id: ConditionId) -> Option<&BudgetLine> {
        self.lines.get(id.index)
    }

    /// Inflow and outflow summed by kind, in the order of [`FlowKind`] (kinds with no
    /// condition left out); each line is labelled with its kind.
    ///
    /// ```
    /// # use quintet::model::{Budget, BudgetLine, FlowKind};
    /// let b = Budget::from_lines(vec![
    ///     BudgetLine { label: "w1".into(), kind: FlowKind::PointSource, inflow: 0.0, outflow: 1.0 },
    ///     BudgetLine { label: "w2".into(), kind: FlowKind::PointSource, inflow: 0.0, outflow: 2.0 },
    /// ]);
    /// assert_eq!(b.by_kind()[0].outflow, 3.0);
    /// ```
    pub fn by_kind(&self) -> Vec<BudgetLine> {
        let mut out: Vec<BudgetLine> = Vec::new();
        let mut kinds: Vec<FlowKind> = self.lines.iter().map(|l| l.kind).collect();
        kinds.sort();
        kinds.dedup();
        for kind in kinds {
            let (inflow, outflow) = self
                .lines
                .iter()
                .filter(|l| l.kind == kind)
                .fold((0.0, 0.0), |(a, b), l| (a + l.inflow, b + l.outflow)); // local: lines
            out.push(BudgetLine {
                label: kind.to_string(),
                kind,
                inflow,
                outflow,
            });
        }
        out
    }

    /// A warning if `|imbalance| > threshold_percent` (or the imbalance is not a number).
    ///
    /// ```
    /// # use quintet::model::{Budget, BudgetLine, FlowKind};
    /// let b = Budget::from_lines(vec![BudgetLine { label: "a".into(), kind: FlowKind::PointSource, inflow: 1.0, outflow: 1.0 }]);
    /// assert!(b.warning(1.0).is_none());
    /// ```
    pub fn warning(&self, threshold_percent: f64) -> Option<BudgetWarning> {
        let d = self.imbalance_percent();
        (d.is_nan() || d.abs() > threshold_percent).then_some(BudgetWarning {
            imbalance_percent: d,
            threshold_percent,
        })
    }

    /// `Ok` if the budget closes to within `threshold_percent`.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::BudgetImbalance`](crate::ErrorKind::BudgetImbalance) otherwise.
    ///
    /// ```
    /// # use quintet::model::{Budget, BudgetLine, FlowKind};
    /// let b = Budget::from_lines(vec![BudgetLine { label: "a".into(), kind: FlowKind::PointSource, inflow: 2.0, outflow: 1.0 }]);
    /// assert!(b.ensure_within(1.0).is_err());
    /// ```
    pub fn ensure_within(&self, threshold_percent: f64) -> Result<(), Error> {
        match self.warning(threshold_percent) {
            None => Ok(()),
            Some(w) => Err(Error::budget_imbalance(
                w.imbalance_percent,
                threshold_percent,
            )),
        }
    }

    /// The budget as a printable table, flows in `unit` (the unit is only printed; quintet
    /// does not convert).
    ///
    /// ```
    /// # use quintet::model::{Budget, BudgetLine, FlowKind};
    /// let b = Budget::from_lines(vec![BudgetLine { label: "heater".into(), kind: FlowKind::PointSource, inflow: 2.0, outflow: 0.0 }]);
    /// assert!(b.table("W").to_string().contains("heater"));
    /// ```
    pub fn table<'a>(&'a self, unit: &'a str) -> BudgetTable<'a> {
        BudgetTable { budget: self, unit }
    }
}

/// A [`Budget`] formatted as a table (see [`Budget::table`]).
///
/// ```
/// # use quintet::model::{Budget, BudgetLine, FlowKind};
/// let b = Budget::from_lines(vec![BudgetLine { label: "sun".into(), kind: FlowKind::PrescribedFlux, inflow: 7.0, outflow: 0.0 }]);
/// let text = b.table("W").to_string();
/// assert!(text.lines().count() > 3);
/// ```
#[derive(Clone, Copy, Debug)]
pub struct BudgetTable<'a> {
    budget: &'a Budget,
    unit: &'a str,
}

impl fmt::Display for BudgetTable<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let b = self.budget;
        let rule = "-".repeat(88);
        writeln!(
            f,
            "flows in {}, positive numbers; net = entering - leaving",
            self.unit
        )?;
        writeln!(
            f,
            "{:<26} {:<18} {:>13} {:>13} {:>14}",
            "condition", "kind", "entering", "leaving", "net"
        )?;
        writeln!(f, "{rule}")?;
        for line in &b.lines {
            writeln!(
                f,
                "{:<26} {:<18} {:>13} {:>13} {:>14}",
                clip(&line.label, 26),
                line.kind.to_string(),
                Sig4(line.inflow),
                Sig4(line.outflow),
                Sig4(line.net())
            )?;
        }
        writeln!(f, "{rule}")?;
        for line in b.by_kind() {
            writeln!(
                f,
                "{:<26} {:<18} {:>13} {:>13} {:>14}",
                "  all of kind",
                line.label,
                Sig4(line.inflow),
                Sig4(line.outflow),
                Sig4(line.net())
            )?;
        }
        writeln!(f, "{rule}")?;
        writeln!(
            f,
            "{:<26} {:<18} {:>13} {:>13} {:>14}",
            "whole model",
            "",
            Sig4(b.total_in),
            Sig4(b.total_out),
            Sig4(b.net())
        )?;
        write!(
            f,
            "imbalance: net is {} % of the mean of entering and leaving",
            Sig4(b.imbalance_percent())
        )
    }
}

/// `s` cut to at most `width` characters.
fn clip(s: &str, width: usize) -> String {
    s.chars().take(width).collect()
}
