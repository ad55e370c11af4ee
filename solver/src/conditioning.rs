//! Warnings for ill-conditioned models, from K's and M's diagonals after assembly (no
//! factorization): stiffness ratio extremes, springs far stiffer than the structure they attach
//! to, and tiny masses. The thresholds are common practice (rules of thumb for double precision:
//! a ratio r of stiffnesses costs about log10 r of the 16 significant digits of a solve).

use antinode_mesh::Structure;

use crate::assembly::System;
use crate::dofs::DofOwner;

/// Largest/smallest positive diagonal of K among free DOFs of one kind above which K is flagged
/// (common practice: 1e12 leaves about four significant digits in a solve).
pub const STIFFNESS_RATIO_WARNING: f64 = 1e12;

/// A spring stiffer than this many times the structure's own stiffness at its DOF is flagged as a
/// "rigid spring" (common practice: penalty springs of 1e3 to 1e6 times the structure are
/// usual; 1e8 and more throw away half the digits). Use a support or a rigid link instead.
pub const RIGID_SPRING_RATIO: f64 = 1e8;

/// A point mass, or the translational mass at a node, below this fraction of the total mass is
/// flagged (common practice): its DOFs give frequencies far above the rest and the shift-invert
/// solve loses accuracy on them.
pub const TINY_MASS_FRACTION: f64 = 1e-9;

/// Most items named in one warning.
const SHOWN: usize = 5;

/// Kinds of DOF whose stiffnesses are comparable (same units).
const KINDS: [&str; 4] = ["translational", "rotational", "absorber", "matrix"];

fn kind(owner: DofOwner) -> usize {
    match owner {
        DofOwner::Node { component, .. } if component < 3 => 0,
        DofOwner::Node { .. } => 1,
        DofOwner::Absorber { .. } => 2,
        DofOwner::Row { .. } => 3,
    }
}

/// Ill-conditioning warnings of `system` (with the names of `structure`, when it comes from one):
/// - per DOF kind, the ratio of the largest to the smallest positive diagonal of K above
///   [`STIFFNESS_RATIO_WARNING`], naming both DOFs;
/// - each spring component k whose free DOF has a structural stiffness (K's diagonal without the
///   spring) s > 0 with k > [`RIGID_SPRING_RATIO`] · s;
/// - point masses below [`TINY_MASS_FRACTION`] of the total mass, and nodes whose translational
///   mass (M's diagonal) is positive but below that fraction.
pub fn conditioning_warnings(system: &System, structure: Option<&Structure>) -> Vec<String> {
    let kd = system.diagonal(&system.k);
    let md = system.diagonal(&system.m);
    let dofs = system.dof_map();
    let mut out = Vec::new();
    for (k, name) in KINDS.iter().enumerate() {
        let of_kind = (0..kd.len()).filter(|&i| kind(dofs.owner(i)) == k && kd[i] > 0.0);
        let (mut lo, mut hi): (Option<usize>, Option<usize>) = (None, None);
        for i in of_kind {
            if lo.is_none_or(|l| kd[i] < kd[l]) {
                lo = Some(i);
            }
            if hi.is_none_or(|h| kd[i] > kd[h]) {
                hi = Some(i);
            }
        }
        if let (Some(lo), Some(hi)) = (lo, hi) {
            let ratio = kd[hi] / kd[lo];
            if ratio > STIFFNESS_RATIO_WARNING {
                out.push(format!(
                    "ill-conditioned stiffness: the {name} stiffnesses on K's diagonal span {ratio:.1e} (above \
                     {STIFFNESS_RATIO_WARNING:.0e}), from {:.3e} at {} to {:.3e} at {}; results may lose accuracy: \
                     replace very stiff springs or parts by supports or rigid links, or stiffen the softest part",
                    kd[lo],
                    dofs.describe(lo),
                    kd[hi],
                    dofs.describe(hi)
                ));
            }
        }
    }
    let Some(s) = structure else {
        return out;
    };
    const COMPONENTS: [&str; 6] = ["ux", "uy", "uz", "rx", "ry", "rz"];
    for sp in &s.springs {
        for (c, &k) in sp.stiffness.iter().enumerate() {
            if k <= 0.0 {
                continue;
            }
            // The structure's own stiffness at each end: K's diagonal less this spring's k.
            let ends = std::iter::once(sp.node).chain(sp.other);
            let structural: Vec<(usize, f64)> =
                ends.filter_map(|n| dofs.dof(n, c).map(|i| (n, kd[i] - k))).filter(|&(_, v)| v > 0.0).collect();
            if let Some(&(node, soft)) = structural.iter().min_by(|a, b| a.1.total_cmp(&b.1)) {
                if k > RIGID_SPRING_RATIO * soft {
                    out.push(format!(
                        "rigid spring: {} {} = {k:.3e} is {:.1e} times the structure's own stiffness {soft:.3e} at \
                         node {} (above {RIGID_SPRING_RATIO:.0e}); this ruins the conditioning of K: use a support \
                         (fixed DOF) or a rigid link instead",
                        sp.label,
                        COMPONENTS[c],
                        k / soft,
                        s.nodes[node].id.0
                    ));
                }
            }
        }
    }
    let total = s.total_mass();
    if total > 0.0 {
        let floor = TINY_MASS_FRACTION * total;
        let tiny: Vec<String> = s
            .point_masses
            .iter()
            .enumerate()
            .filter(|(_, p)| p.mass > 0.0 && p.mass < floor)
            .map(|(i, p)| format!("point_masses[{i}] at node {} ({:.3e} kg)", s.nodes[p.node].id.0, p.mass))
            .collect();
        if !tiny.is_empty() {
            out.push(format!(
                "tiny mass: {} below {TINY_MASS_FRACTION:.0e} of the total mass {total:.4e} kg: {}{}; remove it or \
                 check its units (kg)",
                if tiny.len() == 1 {
                    "a point mass is".to_string()
                } else {
                    format!("{} point masses are", tiny.len())
                },
                tiny.iter().take(SHOWN).cloned().collect::<Vec<_>>().join(", "),
                if tiny.len() > SHOWN { ", ..." } else { "" }
            ));
        }
        let light: Vec<String> = (0..md.len())
            .filter(|&i| matches!(dofs.owner(i), DofOwner::Node { component, .. } if component < 3))
            .filter(|&i| md[i] > 0.0 && md[i] < floor)
            .map(|i| format!("{} ({:.3e} kg)", dofs.describe(i), md[i]))
            .collect();
        if !light.is_empty() {
            out.push(format!(
                "tiny mass: {} translational DOF(s) carry less than {TINY_MASS_FRACTION:.0e} of the total mass \
                 {total:.4e} kg: {}{}; check thicknesses, densities and element sizes there",
                light.len(),
                light.iter().take(SHOWN).cloned().collect::<Vec<_>>().join(", "),
                if light.len() > SHOWN { ", ..." } else { "" }
            ));
        }
    }
    out
}
