//! Stage 1, inputs in: GDAL (only here and in the writers of `report`), the layers, the stand
//! inventory, labelling, patches, road layers, suitability and the treatment catalogue.

pub mod class_rasters;
pub mod gis;
pub mod inventory;
pub mod label;
pub mod layers;
pub mod parcel_index;
pub mod patches;
pub use gis::roads;
pub mod suitability;
pub mod survey_methods;
pub mod treatments;
