//! DOF numbering: node DOFs `[ux, uy, uz, rx, ry, rz]` → free (unconstrained, active) DOF indices,
//! with absorber DOFs appended after the structural ones.
//!
//! Index spaces: *node DOF* (node, component 0..6) as in the model; *free DOF* 0..n_dofs after
//! removing fixed DOFs, DOFs that no element touches and DOFs that a link moves. Constrained DOFs
//! are removed, never kept with large numbers on the diagonal.
//!
//! Links are applied by elimination: every node DOF is a linear combination of free DOFs, u = T q
//! (its *terms*). An independent DOF has one term (itself, weight 1), a fixed or inactive DOF none,
//! a DOF a link moves the terms of its link's formula, resolved through chains of links:
//!
//! - rigid link, member m of reference r, d = x_m − x_r: u_m = u_r + θ_r × d, θ_m = θ_r;
//! - averaging link with members i (equal weights w_i = 1/n), centroid c, r_i = x_i − c:
//!   θ_r = S⁻¹ Σ w_i r_i × u_i with S = Σ w_i (|r_i|² 1 − r_i r_iᵀ), and
//!   u_r = Σ w_i u_i + θ_r × (x_r − c), the least-squares rigid motion of the members'
//!   translations; it reproduces every rigid motion exactly and adds no stiffness.
//!
//! Element matrices then enter K and M as Tᵀ K_e T (see `assembly.rs`).

use antinode_mesh::{LinkKind, LinkSpec, Structure};

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
    /// Terms of slot s (node DOF 6·node + component, then one slot per absorber) are
    /// `terms[start[s]..start[s + 1]]`: (free DOF, weight).
    start: Vec<usize>,
    terms: Vec<(usize, f64)>,
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
                if p.inertia[d].iter().any(|&v| v != 0.0) {
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
        // A link needs its independent nodes' DOFs: all six of a rigid link's reference, the
        // translations of an averaging link's members. The DOFs a link moves are not free.
        let mut moved = vec![None; n];
        for (li, l) in s.links.iter().enumerate() {
            for &m in l.moved() {
                moved[m] = Some(li);
            }
            match l.kind {
                LinkKind::Rigid => active[l.reference] = [true; 6],
                LinkKind::Average => {
                    for &m in &l.members {
                        active[m][..3].fill(true);
                    }
                }
            }
        }
        let mut node_dofs = vec![[None; 6]; n];
        let mut owners = Vec::new();
        for node in 0..n {
            if moved[node].is_some() {
                continue;
            }
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
        let slots = link_terms(s, &node_dofs, &moved);
        let mut start = Vec::with_capacity(6 * n + absorber_dofs.len() + 1);
        let mut terms = Vec::with_capacity(n_structural + absorber_dofs.len());
        start.push(0);
        for node in 0..n {
            for c in 0..6 {
                match (&moved[node], node_dofs[node][c]) {
                    (Some(_), _) => terms.extend_from_slice(&slots[&(node, c)]),
                    (None, Some(i)) => terms.push((i, 1.0)),
                    (None, None) => {}
                }
                start.push(terms.len());
            }
        }
        for &a in &absorber_dofs {
            terms.push((a, 1.0));
            start.push(terms.len());
        }
        Self {
            node_dofs,
            start,
            terms,
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
            start: vec![0],
            terms: Vec::new(),
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

    /// Free DOF index of a node's component, or `None` if fixed, inactive or moved by a link (see
    /// [`Self::terms`] for the motion of any node DOF).
    pub fn dof(&self, node: usize, component: usize) -> Option<usize> {
        self.node_dofs[node][component]
    }

    /// A node DOF as a combination of free DOFs: `(free DOF, weight)` pairs, u = Σ weight · q
    /// (one pair of weight 1 for a free DOF, none for a fixed or inactive one).
    pub fn terms(&self, node: usize, component: usize) -> &[(usize, f64)] {
        let s = 6 * node + component;
        &self.terms[self.start[s]..self.start[s + 1]]
    }

    /// The absorber's DOF as terms (one pair of weight 1), or none if absorbers are not included.
    pub(crate) fn absorber_terms(&self, absorber: usize) -> &[(usize, f64)] {
        if absorber >= self.absorber_dofs.len() {
            return &[];
        }
        let s = 6 * self.node_dofs.len() + absorber;
        &self.terms[self.start[s]..self.start[s + 1]]
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

    /// Expands a vector over free DOFs to per-node `[ux, uy, uz, rx, ry, rz]` (zero where fixed,
    /// the link's motion where a link moves the node).
    pub fn expand(&self, v: &[f64]) -> Vec<[f64; 6]> {
        (0..self.node_dofs.len())
            .map(|node| std::array::from_fn(|c| self.terms(node, c).iter().map(|&(i, w)| w * v[i]).sum()))
            .collect()
    }
}

/// A node DOF as terms over free DOFs, being built.
type Terms = Vec<(usize, f64)>;

/// Terms of every DOF a link moves, keyed by (node, component), resolved through chains (the
/// structure guarantees no loops and at most one link per moved node).
fn link_terms(
    s: &Structure,
    node_dofs: &[[Option<usize>; 6]],
    moved: &[Option<usize>],
) -> std::collections::HashMap<(usize, usize), Terms> {
    let mut done: std::collections::HashMap<(usize, usize), Terms> = std::collections::HashMap::new();
    // Links whose independent nodes are resolved go first: repeat until every moved node is done
    // (chains are short; each pass resolves at least one link).
    let mut pending: Vec<usize> = (0..s.links.len()).collect();
    while !pending.is_empty() {
        let before = pending.len();
        pending.retain(|&li| {
            let l = &s.links[li];
            let ready = masters(l).iter().all(|&m| moved[m].is_none() || done.contains_key(&(m, 0)));
            if ready {
                let get = |node: usize, c: usize| -> Terms {
                    if moved[node].is_some() {
                        done[&(node, c)].clone()
                    } else {
                        node_dofs[node][c].map(|i| vec![(i, 1.0)]).unwrap_or_default()
                    }
                };
                for (key, t) in resolve(s, l, &get) {
                    done.insert(key, t);
                }
            }
            !ready
        });
        assert!(pending.len() < before, "links form a loop (validation rules them out)");
    }
    done
}

/// The nodes whose motion defines a link's moved nodes.
fn masters(l: &LinkSpec) -> &[usize] {
    match l.kind {
        LinkKind::Rigid => std::slice::from_ref(&l.reference),
        LinkKind::Average => &l.members,
    }
}

/// Adds `w ·` terms `t` to `acc`.
fn add_scaled(acc: &mut Terms, t: &[(usize, f64)], w: f64) {
    if w != 0.0 {
        acc.extend(t.iter().map(|&(i, v)| (i, w * v)));
    }
}

/// Merges repeated free DOFs and drops exact zeros.
fn tidy(mut t: Terms) -> Terms {
    t.sort_by_key(|&(i, _)| i);
    let mut out: Terms = Vec::with_capacity(t.len());
    for (i, v) in t {
        match out.last_mut() {
            Some(last) if last.0 == i => last.1 += v,
            _ => out.push((i, v)),
        }
    }
    out.retain(|&(_, v)| v != 0.0);
    out
}

/// Terms of the DOFs link `l` moves, given the terms of its independent nodes' DOFs.
fn resolve(s: &Structure, l: &LinkSpec, get: &dyn Fn(usize, usize) -> Terms) -> Vec<((usize, usize), Terms)> {
    let x = |n: usize| s.nodes[n].xyz;
    let mut out = Vec::new();
    match l.kind {
        LinkKind::Rigid => {
            let r = l.reference;
            let t: [Terms; 6] = std::array::from_fn(|c| get(r, c));
            for &m in &l.members {
                let d = [0, 1, 2].map(|k| x(m)[k] - x(r)[k]);
                // u_m = u_r + θ × d: (θy dz − θz dy, θz dx − θx dz, θx dy − θy dx).
                let rows = [[(4, d[2]), (5, -d[1])], [(5, d[0]), (3, -d[2])], [(3, d[1]), (4, -d[0])]];
                for (k, row) in rows.iter().enumerate() {
                    let mut acc = t[k].clone();
                    for &(c, w) in row {
                        add_scaled(&mut acc, &t[c], w);
                    }
                    out.push(((m, k), tidy(acc)));
                }
                for c in 3..6 {
                    out.push(((m, c), t[c].clone()));
                }
            }
        }
        LinkKind::Average => {
            let n = l.members.len() as f64;
            let w = 1.0 / n;
            let mut c = [0.0; 3];
            for &m in &l.members {
                for k in 0..3 {
                    c[k] += w * x(m)[k];
                }
            }
            let mut sm = [[0.0; 3]; 3];
            for &m in &l.members {
                let r = [0, 1, 2].map(|k| x(m)[k] - c[k]);
                let rr = r[0] * r[0] + r[1] * r[1] + r[2] * r[2];
                for a in 0..3 {
                    for b in 0..3 {
                        sm[a][b] += w * (if a == b { rr } else { 0.0 } - r[a] * r[b]);
                    }
                }
            }
            let si = inverse3(&sm);
            let d = [0, 1, 2].map(|k| x(l.reference)[k] - c[k]);
            let mut rot: [Terms; 3] = Default::default();
            let mut tra: [Terms; 3] = Default::default();
            for &m in &l.members {
                let r = [0, 1, 2].map(|k| x(m)[k] - c[k]);
                // r × u as a matrix acting on u: [r]ₓ.
                let rx = [[0.0, -r[2], r[1]], [r[2], 0.0, -r[0]], [-r[1], r[0], 0.0]];
                let u: [Terms; 3] = std::array::from_fn(|k| get(m, k));
                for a in 0..3 {
                    add_scaled(&mut tra[a], &u[a], w);
                    for b in 0..3 {
                        // A = w S⁻¹ [r]ₓ.
                        let coef: f64 = (0..3).map(|k| si[a][k] * rx[k][b]).sum::<f64>() * w;
                        add_scaled(&mut rot[a], &u[b], coef);
                    }
                }
            }
            let rot = rot.map(tidy);
            // u_ref = ū + θ × d.
            let rows = [[(1, d[2]), (2, -d[1])], [(2, d[0]), (0, -d[2])], [(0, d[1]), (1, -d[0])]];
            for (k, row) in rows.iter().enumerate() {
                let mut acc = std::mem::take(&mut tra[k]);
                for &(c, wt) in row {
                    add_scaled(&mut acc, &rot[c], wt);
                }
                out.push(((l.reference, k), tidy(acc)));
            }
            for (k, t) in rot.into_iter().enumerate() {
                out.push(((l.reference, 3 + k), t));
            }
        }
    }
    out
}

/// Inverse of a symmetric positive definite 3 × 3 matrix by cofactors (validation guarantees the
/// averaging link's members are not on one line, so S is regular).
fn inverse3(a: &[[f64; 3]; 3]) -> [[f64; 3]; 3] {
    let c = |i: usize, j: usize| {
        let (r0, r1) = ((i + 1) % 3, (i + 2) % 3);
        let (c0, c1) = ((j + 1) % 3, (j + 2) % 3);
        a[r0][c0] * a[r1][c1] - a[r0][c1] * a[r1][c0]
    };
    let det = a[0][0] * c(0, 0) + a[0][1] * c(0, 1) + a[0][2] * c(0, 2);
    std::array::from_fn(|i| std::array::from_fn(|j| c(j, i) / det))
}
