//! Changes to a model record after assembly: what can change in place (conductivity, storage,
//! exchange coefficients), the checks a change passes, and the undo when re-assembly fails.
//! [`SteadySystem`](super::SteadySystem) and [`Stepper`](super::Stepper) re-assemble into the
//! storage they hold, so condition handles and the operator stay valid.

use super::advection::FaceFlows;
use super::field::Profile;
use super::medium::{Conductivity, Storage};
use super::spec::{check_nonnegative, check_profile, ConditionId, Model, Spec, Target};
use crate::Error;

/// One change of a model record.
pub(crate) enum Change {
    Conductivity(Conductivity),
    Storage(Storage),
    Exchange(ConditionId, Profile),
    Flows(FaceFlows),
}

impl Change {
    /// Check the change against `model` and make it; returns the change that undoes it.
    fn apply(self, model: &mut Model) -> Result<Change, Error> {
        let grid = model.geometry.grid();
        match self {
            Change::Conductivity(c) => {
                c.check_len(grid)?;
                Ok(Change::Conductivity(std::mem::replace(
                    &mut model.conductivity,
                    c,
                )))
            }
            Change::Storage(s) => {
                s.values().check_len("storage", grid)?;
                match model.storage.replace(s) {
                    Some(previous) => Ok(Change::Storage(previous)),
                    None => Err(Error::setting(
                        "storage",
                        0.0,
                        "storage set with Model::set_storage before the model is assembled",
                    )),
                }
            }
            Change::Flows(flows) => {
                flows.check_grid(grid)?;
                match &mut model.advection {
                    Some(a) => Ok(Change::Flows(std::mem::replace(&mut a.flows, flows))),
                    None => Err(Error::setting(
                        "face flows",
                        f64::NAN,
                        "a flow field given with Model::set_advection before the model is assembled",
                    )),
                }
            }
            Change::Exchange(id, coefficient) => {
                let count = model.conditions.len();
                let unknown = || Error::unknown_condition(id.index, count);
                if id.model != model.tag {
                    return Err(unknown());
                }
                let condition = model.conditions.get(id.index).ok_or_else(unknown)?;
                let what = "exchange coefficient";
                let cells = condition.cells(&model.geometry);
                let along = match condition.target {
                    Target::Edge(side) => Some(side),
                    _ => None,
                };
                check_profile(grid, what, along, &cells, &coefficient)?;
                check_nonnegative(grid, what, &cells, &coefficient)?;
                match &mut model.conditions[id.index].spec {
                    Spec::Exchange { coefficient: c, .. } => {
                        Ok(Change::Exchange(id, std::mem::replace(c, coefficient)))
                    }
                    _ => Err(Error::setting(
                        "condition",
                        id.index as f64,
                        "an edge or cell exchange (only their coefficients change in place)",
                    )),
                }
            }
        }
    }
}

/// Something assembled from a model record, able to assemble it again into its own storage.
pub(crate) trait Reassemble {
    /// The record it was assembled from.
    fn record(&mut self) -> &mut Model;

    /// Assemble the record again, in place.
    fn reassemble(&mut self) -> Result<(), Error>;

    /// Make `change` and re-assemble; if the re-assembly fails, undo the change and
    /// re-assemble what was there before.
    fn change(&mut self, change: Change) -> Result<(), Error> {
        let undo = change.apply(self.record())?;
        match self.reassemble() {
            Ok(()) => Ok(()),
            Err(e) => {
                undo.apply(self.record())?;
                self.reassemble()?;
                Err(e)
            }
        }
    }
}
