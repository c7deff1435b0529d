//! Patch structure: how the range area is split into patches.
//!
//! Input: patch areas in km2 (true areas on the ellipsoid, from the patch list). Output per
//! group of patches: the number of patches, the largest, the area-weighted mean patch area
//! `Σ a² / Σ a` (the size of the patch a randomly chosen km2 of range lies in), and, given
//! a minimum patch area, the patches below it and the share of the group's area they hold.

use serde::Serialize;

/// The structure of one group of patches.
#[derive(Debug, Clone, Serialize, PartialEq, schemars::JsonSchema)]
pub struct PatchStructure {
    /// Number of patches.
    pub patches: usize,
    /// Total area, km2.
    pub total_km2: f64,
    /// Largest patch, km2 (0 when there is none).
    pub largest_km2: f64,
    /// Area-weighted mean patch area Σa²/Σa, km2 (0 when there is none).
    pub area_weighted_mean_km2: f64,
    /// The minimum patch area asked for (--min-patch-km2), km2.
    pub min_patch_km2: Option<f64>,
    /// Patches strictly smaller than the minimum.
    pub patches_below_min: Option<usize>,
    /// Share (0..1) of the total area in patches strictly smaller than the minimum.
    pub share_below_min: Option<f64>,
}

/// The structure of patches with areas `areas_km2`.
pub fn patch_structure(areas_km2: &[f64], min_patch_km2: Option<f64>) -> PatchStructure {
    let total: f64 = areas_km2.iter().sum::<f64>() + 0.0;
    let sq: f64 = areas_km2.iter().map(|a| a * a).sum::<f64>() + 0.0;
    let largest = areas_km2.iter().copied().fold(0.0, f64::max);
    let below = min_patch_km2.map(|m| {
        let small: Vec<f64> = areas_km2.iter().copied().filter(|&a| a < m).collect();
        let s: f64 = small.iter().sum::<f64>() + 0.0;
        (small.len(), if total > 0.0 { s / total } else { 0.0 })
    });
    PatchStructure {
        patches: areas_km2.len(),
        total_km2: total,
        largest_km2: largest,
        area_weighted_mean_km2: if total > 0.0 { sq / total } else { 0.0 },
        min_patch_km2,
        patches_below_min: below.map(|b| b.0),
        share_below_min: below.map(|b| b.1),
    }
}

/// Patch structure of the modelled range.
#[derive(Debug, Clone, Serialize, PartialEq, schemars::JsonSchema)]
pub struct StructureReport {
    /// Class-1 patches (suitable inside M).
    pub inside_accessible: PatchStructure,
    /// Class-1 and class-2 patches (all suitable area).
    pub suitable: PatchStructure,
}
