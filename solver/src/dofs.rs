//! DOF numbering: node DOFs `[ux, uy, uz, rx, ry, rz]` → free (unconstrained, active) DOF indices,
//! with absorber DOFs appended after the structural ones.
//!
//! Index spaces: *node DOF* (node, component 0..6) as in the model; *free DOF* 0..n_dofs after
//! removing fixed DOFs and DOFs that no element touches. Constrained DOFs are removed, never kept
//! with large numbers on the diagonal.

use antinode_mesh::Structure;

/// What a free DOF is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DofOwner {
    /// A node DOF: node index and component (0..6 in `[ux, uy, uz, rx, ry, rz]`).
    Node {
        /// Node index.
        node: usize,
        /// Component.
        component: usize,
    },
    /// The displacement of an absorber's mass along its direction.
    Absorber {
        /// Absorber index in the structure.
        absorber: usize,
    },
    /// A row of matrices read from files (no geometry).
    Row {
        /// Row index, from 0.
        index: usize,
    },
}

/// Numbering of the free DOFs.
#[derive(Debug, Clone)]
pub struct DofMap {
    node_dofs: Vec<[Option<usize>; 6]>,
    owners: Vec<DofOwner>,
    absorber_dofs: Vec<usize>,
    n_structural: usize,
    /// Node ids and absorber names, for messages.
    node_ids: Vec<u64>,
    absorber_names: Vec<String>,
}

const COMPONENT_NAMES: [&str; 6] = ["ux", "uy", "uz", "rx", "ry", "rz"];

impl DofMap {
    /// Numbers the free DOFs of `s`. With `include_absorbers`, one DOF per absorber follows the
    /// structural DOFs.
    pub fn new(s: &Structure, include_absorbers: bool) -> Self {
        let n = s.nodes.len();
        let mut active = vec![[false; 6]; n];
        for b in &s.beams {
            for &node in &b.nodes {
                active[node] = [true; 6];
            }
        }
        for e in &s.shells {
            for &node in &e.nodes {
                active[node] = [true; 6];
            }
        }
        for sp in &s.springs {
            for d in 0..6 {
                if sp.stiffness[d] > 0.0 {
                    active[sp.node][d] = true;
                    if let Some(o) = sp.other {
                        active[o][d] = true;
                    }
                }
            }
        }
        for p in &s.point_masses {
            for d in 0..3 {
                if p.mass > 0.0 {
                    active[p.node][d] = true;
                }
                if p.inertia[d] > 0.0 {
                    active[p.node][3 + d] = true;
                }
            }
        }
        if include_absorbers {
            for a in &s.absorbers {
                for d in 0..3 {
                    if a.direction.unit[d] != 0.0 {
                        active[a.node][d] = true;
                    }
                }
            }
        }
        let mut node_dofs = vec![[None; 6]; n];
        let mut owners = Vec::new();
        for node in 0..n {
            for c in 0..6 {
                if active[node][c] && !s.fixed[node][c] {
                    node_dofs[node][c] = Some(owners.len());
                    owners.push(DofOwner::Node { node, component: c });
                }
            }
        }
        let n_structural = owners.len();
        let mut absorber_dofs = Vec::new();
        if include_absorbers {
            for a in 0..s.absorbers.len() {
                absorber_dofs.push(owners.len());
                owners.push(DofOwner::Absorber { absorber: a });
            }
        }
        Self {
            node_dofs,
            owners,
            absorber_dofs,
            n_structural,
            node_ids: s.nodes.iter().map(|n| n.id.0).collect(),
            absorber_names: s.absorbers.iter().map(|a| a.name.clone()).collect(),
        }
    }

    /// Numbering of `n` DOFs of matrices given without geometry.
    pub fn rows(n: usize) -> Self {
        Self {
            node_dofs: Vec::new(),
            owners: (0..n).map(|index| DofOwner::Row { index }).collect(),
            absorber_dofs: Vec::new(),
            n_structural: n,
            node_ids: Vec::new(),
            absorber_names: Vec::new(),
        }
    }

    /// Number of free DOFs (structural and absorber).
    pub fn n_dofs(&self) -> usize {
        self.owners.len()
    }

    /// Number of free structural DOFs (they come first).
    pub fn n_structural(&self) -> usize {
        self.n_structural
    }

    /// Number of nodes.
    pub fn n_nodes(&self) -> usize {
        self.node_dofs.len()
    }

    /// Free DOF index of a node's component, or `None` if fixed or inactive.
    pub fn dof(&self, node: usize, component: usize) -> Option<usize> {
        self.node_dofs[node][component]
    }

    /// The six free DOF indices of a node.
    pub fn node_dofs(&self, node: usize) -> [Option<usize>; 6] {
        self.node_dofs[node]
    }

    /// Free DOF of an absorber's mass, if absorbers are included.
    pub fn absorber_dof(&self, absorber: usize) -> Option<usize> {
        self.absorber_dofs.get(absorber).copied()
    }

    /// What free DOF `dof` is.
    pub fn owner(&self, dof: usize) -> DofOwner {
        self.owners[dof]
    }

    /// Words for a free DOF, e.g. `node 12 uz`, `absorber "tip" mass` or `row 7` (from 1, as in a
    /// matrix file).
    pub fn describe(&self, dof: usize) -> String {
        match self.owners[dof] {
            DofOwner::Node { node, component } => {
                format!("node {} {}", self.node_ids[node], COMPONENT_NAMES[component])
            }
            DofOwner::Absorber { absorber } => format!("absorber \"{}\" mass", self.absorber_names[absorber]),
            DofOwner::Row { index } => format!("row {}", index + 1),
        }
    }

    /// Expands a vector over free DOFs to per-node `[ux, uy, uz, rx, ry, rz]` (zero where fixed).
    pub fn expand(&self, v: &[f64]) -> Vec<[f64; 6]> {
        self.node_dofs
            .iter()
            .map(|d| {
                let mut out = [0.0; 6];
                for c in 0..6 {
                    if let Some(i) = d[c] {
                        out[c] = v[i];
                    }
                }
                out
            })
            .collect()
    }
}
