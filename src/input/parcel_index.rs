//! Which parcel a point lies in: an R-tree over the parcels' bounding boxes.

use geo::{Contains, Point};
use rstar::RTree;
use rstar::primitives::{GeomWithData, Rectangle};

use crate::input::layers::Parcel;

/// Finds the parcel a point lies in.
pub struct ParcelIndex<'a> {
    parcels: &'a [Parcel],
    tree: RTree<GeomWithData<Rectangle<[f64; 2]>, usize>>,
}

impl<'a> ParcelIndex<'a> {
    pub fn new(parcels: &'a [Parcel]) -> Self {
        use geo::BoundingRect;
        let items = parcels
            .iter()
            .enumerate()
            .filter_map(|(i, p)| {
                p.geometry.bounding_rect().map(|r| {
                    GeomWithData::new(
                        Rectangle::from_corners([r.min().x, r.min().y], [r.max().x, r.max().y]),
                        i,
                    )
                })
            })
            .collect();
        ParcelIndex {
            parcels,
            tree: RTree::bulk_load(items),
        }
    }

    /// The last parcel (in layer order) containing (x, y), as rasterising would burn it.
    pub fn locate(&self, x: f64, y: f64) -> Option<&'a Parcel> {
        let point = Point::new(x, y);
        self.tree
            .locate_all_at_point(&[x, y])
            .map(|g| g.data)
            .filter(|&i| self.parcels[i].geometry.contains(&point))
            .max()
            .map(|i| &self.parcels[i])
    }
}
