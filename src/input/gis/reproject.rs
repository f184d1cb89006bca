//! Working-CRS points to WGS 84 longitude/latitude and back, in traditional GIS axis order.

use gdal::spatial_ref::{CoordTransform, SpatialRef};
use gdal::vector::{Geometry, ToGdal};

use crate::core::error::{Error, Result};

use super::{Crs, traditional};

/// Converts working-CRS points to WGS 84 longitude/latitude.
pub struct ToLonLat {
    transform: CoordTransform,
}

impl ToLonLat {
    pub fn new(crs: &Crs) -> Result<ToLonLat> {
        let wgs84 = traditional(
            SpatialRef::from_epsg(4326).map_err(|e| Error::Internal(format!("EPSG:4326: {e}")))?,
        );
        let transform = CoordTransform::new(&crs.srs()?, &wgs84)
            .map_err(|e| Error::Internal(format!("reprojection to WGS 84: {e}")))?;
        Ok(ToLonLat { transform })
    }

    /// (lon, lat) in degrees for each (x, y).
    pub fn points(&self, points: &[(f64, f64)]) -> Result<Vec<(f64, f64)>> {
        let mut xs: Vec<f64> = points.iter().map(|p| p.0).collect();
        let mut ys: Vec<f64> = points.iter().map(|p| p.1).collect();
        if xs.is_empty() {
            return Ok(Vec::new());
        }
        self.transform
            .transform_coords(&mut xs, &mut ys, &mut [])
            .map_err(|e| Error::Internal(format!("reprojection to WGS 84: {e}")))?;
        Ok(xs.into_iter().zip(ys).collect())
    }

    /// The index of the first point that cannot be converted (outside the CRS's domain, or not
    /// finite), or Ok when all can.
    pub fn check(&self, points: &[(f64, f64)]) -> std::result::Result<(), usize> {
        if let Some(k) = points
            .iter()
            .position(|p| !(p.0.is_finite() && p.1.is_finite()))
        {
            return Err(k);
        }
        let ok = |chunk: &[(f64, f64)]| {
            self.points(chunk)
                .is_ok_and(|v| v.iter().all(|p| p.0.is_finite() && p.1.is_finite()))
        };
        if ok(points) {
            return Ok(());
        }
        // Find the culprit point by point (only on failure).
        match points.iter().position(|p| !ok(std::slice::from_ref(p))) {
            Some(k) => Err(k),
            None => Ok(()),
        }
    }

    /// A geometry reprojected to WGS 84.
    pub fn geometry(&self, geometry: &geo::Geometry<f64>) -> Result<Geometry> {
        let mut g = geometry
            .to_gdal()
            .map_err(|e| Error::Internal(format!("convert geometry to GDAL: {e}")))?;
        g.transform_inplace(&self.transform)
            .map_err(|e| Error::Internal(format!("reprojection to WGS 84: {e}")))?;
        Ok(g)
    }
}

/// Transform points between two CRS given as definitions (used by tests and the demo generator).
pub fn transform_points(from: &str, to: &str, points: &[(f64, f64)]) -> Result<Vec<(f64, f64)>> {
    let from = traditional(
        SpatialRef::from_definition(from)
            .map_err(|e| Error::input(format!("CRS `{from}`: {e}")))?,
    );
    let to = traditional(
        SpatialRef::from_definition(to).map_err(|e| Error::input(format!("CRS `{to}`: {e}")))?,
    );
    let transform = CoordTransform::new(&from, &to)
        .map_err(|e| Error::Internal(format!("reprojection: {e}")))?;
    let mut xs: Vec<f64> = points.iter().map(|p| p.0).collect();
    let mut ys: Vec<f64> = points.iter().map(|p| p.1).collect();
    transform
        .transform_coords(&mut xs, &mut ys, &mut [])
        .map_err(|e| Error::Internal(format!("reprojection: {e}")))?;
    Ok(xs.into_iter().zip(ys).collect())
}
