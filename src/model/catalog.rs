//! The catalog: every transistor and resistor class a search may use.

use super::{Polarity, ResistorClass, TransistorClass};

#[derive(Debug, Clone, PartialEq)]
pub struct Catalog {
    pub currency: String,
    /// The order quantity the prices are quoted at.
    pub reference_quantity: u32,
    pub transistors: Vec<TransistorClass>,
    pub resistors: Vec<ResistorClass>,
}

impl Catalog {
    pub fn transistor(&self, id: &str) -> Option<&TransistorClass> {
        self.transistors.iter().find(|t| t.id == id)
    }

    pub fn resistor(&self, id: &str) -> Option<&ResistorClass> {
        self.resistors.iter().find(|r| r.id == id)
    }

    /// The cheapest single-device class of a polarity: the default helper transistor.
    pub fn cheapest_single(&self, polarity: Polarity) -> Option<&TransistorClass> {
        self.transistors
            .iter()
            .filter(|t| t.polarity == polarity && t.devices_per_package == 1)
            .min_by(|a, b| {
                a.unit_cost
                    .total_cmp(&b.unit_cost)
                    .then_with(|| a.id.cmp(&b.id))
            })
    }
}
