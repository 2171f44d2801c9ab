//! Smallest set of smallest rings (SSSR), as a minimum cycle basis of the
//! molecular graph.
//!
//! Method: bridges are removed (Tarjan's bridge search), leaving the ring
//! systems (2-edge-connected components). For each ring system, candidate
//! cycles are generated, sorted by size, and kept greedily when independent of
//! those already kept (Gaussian elimination over GF(2) on edge-incidence
//! vectors) until the cyclomatic number E − V + 1 of the system is reached.
//! Candidates are Horton's cycles P(v,x) + (x,y) + P(y,v) for every vertex v
//! and edge (x,y) (Horton, SIAM J. Comput. 1987, 16, 358), which contain a
//! minimum cycle basis, for ring systems up to [`HORTON_MAX_ATOMS`] atoms; and
//! for every edge a shortest cycle through it. If a very large ring system
//! (beyond the Horton limit) still lacks rank, fundamental cycles of a BFS
//! spanning tree complete the basis, so the count always equals the cyclomatic
//! number (the set is then a cycle basis but may not be minimal).

use std::collections::{HashMap, HashSet, VecDeque};

/// Largest ring system (atoms) for which all Horton candidate cycles are
/// generated. Real ring systems (steroids, fullerenes, cyclodextrins) are far
/// smaller; the limit keeps proteins with disulfide-closed macrocycles fast.
pub const HORTON_MAX_ATOMS: usize = 400;

/// The smallest set of smallest rings of a graph given by its neighbour lists
/// (0-based, symmetric). Each ring lists its atoms in ring order (consecutive
/// atoms bonded), starting from its smallest index and going toward the smaller
/// of that atom's two ring neighbours. Rings are sorted by size, then by their
/// atom lists. The number of rings is the cyclomatic number
/// bonds − atoms + connected components.
pub fn sssr(neighbors: &[Vec<usize>]) -> Vec<Vec<usize>> {
    let n = neighbors.len();
    let adj = sanitize(neighbors);
    let bridges = find_bridges(&adj);
    // Ring-edge adjacency: non-bridge edges only.
    let ring_adj: Vec<Vec<usize>> = (0..n)
        .map(|u| {
            adj[u]
                .iter()
                .copied()
                .filter(|&v| !bridges.contains(&(u.min(v), u.max(v))))
                .collect()
        })
        .collect();
    let mut comp = vec![usize::MAX; n];
    let mut rings = Vec::new();
    for start in 0..n {
        if comp[start] != usize::MAX || ring_adj[start].is_empty() {
            continue;
        }
        // Collect one ring system.
        let mut verts = vec![start];
        comp[start] = start;
        let mut k = 0;
        while k < verts.len() {
            let u = verts[k];
            k += 1;
            for &v in &ring_adj[u] {
                if comp[v] == usize::MAX {
                    comp[v] = start;
                    verts.push(v);
                }
            }
        }
        verts.sort_unstable();
        rings.extend(system_rings(&ring_adj, &verts));
    }
    rings.sort_by(|a, b| a.len().cmp(&b.len()).then_with(|| a.cmp(b)));
    rings
}

/// Neighbour lists made symmetric, sorted, without self-loops, duplicates or
/// out-of-range indices.
fn sanitize(neighbors: &[Vec<usize>]) -> Vec<Vec<usize>> {
    let n = neighbors.len();
    let mut adj = vec![Vec::new(); n];
    for (u, nb) in neighbors.iter().enumerate() {
        for &v in nb {
            if v < n && v != u {
                adj[u].push(v);
                adj[v].push(u);
            }
        }
    }
    for a in &mut adj {
        a.sort_unstable();
        a.dedup();
    }
    adj
}

/// Bridges (edges in no cycle) as (min, max) pairs; iterative Tarjan.
fn find_bridges(adj: &[Vec<usize>]) -> HashSet<(usize, usize)> {
    let n = adj.len();
    let mut disc = vec![usize::MAX; n];
    let mut low = vec![0usize; n];
    let mut bridges = HashSet::new();
    let mut time = 0;
    for root in 0..n {
        if disc[root] != usize::MAX {
            continue;
        }
        // Stack of (vertex, parent, next neighbour position).
        let mut stack: Vec<(usize, usize, usize)> = vec![(root, usize::MAX, 0)];
        disc[root] = time;
        low[root] = time;
        time += 1;
        while let Some(top) = stack.last_mut() {
            let (u, parent, pos) = *top;
            if pos < adj[u].len() {
                top.2 += 1;
                let v = adj[u][pos];
                if v == parent {
                    continue;
                }
                if disc[v] == usize::MAX {
                    disc[v] = time;
                    low[v] = time;
                    time += 1;
                    stack.push((v, u, 0));
                } else {
                    low[u] = low[u].min(disc[v]);
                }
            } else {
                stack.pop();
                if parent != usize::MAX {
                    low[parent] = low[parent].min(low[u]);
                    if low[u] > disc[parent] {
                        bridges.insert((parent.min(u), parent.max(u)));
                    }
                }
            }
        }
    }
    bridges
}

/// A cycle in canonical order: starts at its smallest atom, then goes toward
/// the smaller of that atom's two ring neighbours.
fn canonical(cycle: &[usize]) -> Vec<usize> {
    let len = cycle.len();
    let (pos, _) = cycle
        .iter()
        .enumerate()
        .min_by_key(|&(_, &a)| a)
        .unwrap_or((0, &0));
    let next = cycle[(pos + 1) % len];
    let prev = cycle[(pos + len - 1) % len];
    if next <= prev {
        (0..len).map(|k| cycle[(pos + k) % len]).collect()
    } else {
        (0..len).map(|k| cycle[(pos + len - k) % len]).collect()
    }
}

/// BFS from `src` within the ring system; returns (dist, parent) indexed by
/// local vertex number. `skip` is an edge not to traverse.
fn bfs(
    local_adj: &[Vec<usize>],
    src: usize,
    skip: Option<(usize, usize)>,
    dist: &mut [usize],
    parent: &mut [usize],
) {
    dist.fill(usize::MAX);
    parent.fill(usize::MAX);
    dist[src] = 0;
    let mut q = VecDeque::new();
    q.push_back(src);
    while let Some(u) = q.pop_front() {
        for &v in &local_adj[u] {
            if let Some((a, b)) = skip {
                if (u == a && v == b) || (u == b && v == a) {
                    continue;
                }
            }
            if dist[v] == usize::MAX {
                dist[v] = dist[u] + 1;
                parent[v] = u;
                q.push_back(v);
            }
        }
    }
}

/// Path from `x` up the BFS tree to the root (inclusive both ends).
fn tree_path(parent: &[usize], x: usize) -> Vec<usize> {
    let mut p = vec![x];
    let mut c = x;
    while parent[c] != usize::MAX {
        c = parent[c];
        p.push(c);
    }
    p
}

/// Rings of one ring system (`verts` sorted, global indices).
fn system_rings(ring_adj: &[Vec<usize>], verts: &[usize]) -> Vec<Vec<usize>> {
    let nv = verts.len();
    let local: HashMap<usize, usize> = verts.iter().enumerate().map(|(i, &g)| (g, i)).collect();
    let local_adj: Vec<Vec<usize>> = verts
        .iter()
        .map(|&g| {
            ring_adj[g]
                .iter()
                .filter_map(|v| local.get(v).copied())
                .collect()
        })
        .collect();
    let mut edges: Vec<(usize, usize)> = Vec::new();
    for (u, nb) in local_adj.iter().enumerate() {
        for &v in nb {
            if u < v {
                edges.push((u, v));
            }
        }
    }
    let edge_index: HashMap<(usize, usize), usize> =
        edges.iter().enumerate().map(|(k, &e)| (e, k)).collect();
    let ne = edges.len();
    let needed = (ne + 1).saturating_sub(nv);
    if needed == 0 {
        return Vec::new();
    }

    let mut seen: HashSet<Vec<usize>> = HashSet::new();
    let mut candidates: Vec<Vec<usize>> = Vec::new();
    let mut add = |cycle: Vec<usize>, seen: &mut HashSet<Vec<usize>>| {
        if cycle.len() >= 3 {
            let c = canonical(&cycle);
            if seen.insert(c.clone()) {
                candidates.push(c);
            }
        }
    };
    let mut dist = vec![0usize; nv];
    let mut parent = vec![0usize; nv];

    // Shortest cycle through every edge.
    for &(u, v) in &edges {
        bfs(&local_adj, u, Some((u, v)), &mut dist, &mut parent);
        if dist[v] != usize::MAX {
            add(tree_path(&parent, v), &mut seen);
        }
    }
    // Horton candidates.
    if nv <= HORTON_MAX_ATOMS {
        let mut mark = vec![false; nv];
        for root in 0..nv {
            bfs(&local_adj, root, None, &mut dist, &mut parent);
            for &(x, y) in &edges {
                if parent[x] == y || parent[y] == x {
                    continue;
                }
                let px = tree_path(&parent, x);
                let py = tree_path(&parent, y);
                for &a in &px {
                    mark[a] = true;
                }
                // The two tree paths must meet only at the root.
                let disjoint = py[..py.len() - 1].iter().all(|&b| !mark[b]);
                for &a in &px {
                    mark[a] = false;
                }
                if !disjoint {
                    continue;
                }
                // root ... x (reversed px) then y ... (py without root).
                let mut cyc: Vec<usize> = px.iter().rev().copied().collect();
                cyc.extend(py[..py.len() - 1].iter().copied());
                add(cyc, &mut seen);
            }
        }
    }
    candidates.sort_by(|a, b| a.len().cmp(&b.len()).then_with(|| a.cmp(b)));

    let mut basis = Gf2Basis::new(ne);
    let mut out: Vec<Vec<usize>> = Vec::new();
    for c in candidates {
        if out.len() == needed {
            break;
        }
        let bits = incidence(&c, &edge_index, ne);
        if basis.insert(bits) {
            out.push(c);
        }
    }
    if out.len() < needed {
        // Fundamental cycles of a BFS spanning tree from local vertex 0.
        bfs(&local_adj, 0, None, &mut dist, &mut parent);
        let mut fund = Vec::new();
        for &(x, y) in &edges {
            if parent[x] == y || parent[y] == x {
                continue;
            }
            let px = tree_path(&parent, x);
            let py = tree_path(&parent, y);
            // Cut both at their lowest common ancestor.
            let sx: HashSet<usize> = px.iter().copied().collect();
            let lca_pos_y = py
                .iter()
                .position(|b| sx.contains(b))
                .unwrap_or(py.len() - 1);
            let lca = py[lca_pos_y];
            let lca_pos_x = px.iter().position(|&a| a == lca).unwrap_or(px.len() - 1);
            let mut c2: Vec<usize> = px[..=lca_pos_x].iter().rev().copied().collect();
            c2.extend(py[..lca_pos_y].iter().copied());
            fund.push(canonical(&c2));
        }
        fund.sort_by(|a, b| a.len().cmp(&b.len()).then_with(|| a.cmp(b)));
        for c in fund {
            if out.len() == needed {
                break;
            }
            let bits = incidence(&c, &edge_index, ne);
            if basis.insert(bits) {
                out.push(c);
            }
        }
    }
    out.into_iter()
        .map(|c| canonical(&c.iter().map(|&l| verts[l]).collect::<Vec<_>>()))
        .collect()
}

/// Edge-incidence bit vector of a cycle (local indices).
fn incidence(cycle: &[usize], edge_index: &HashMap<(usize, usize), usize>, ne: usize) -> Vec<u64> {
    let mut bits = vec![0u64; ne.div_ceil(64)];
    let len = cycle.len();
    for k in 0..len {
        let (a, b) = (cycle[k], cycle[(k + 1) % len]);
        if let Some(&e) = edge_index.get(&(a.min(b), a.max(b))) {
            bits[e / 64] ^= 1u64 << (e % 64);
        }
    }
    bits
}

/// An incrementally built basis of GF(2) vectors, indexed by pivot (lowest set bit).
struct Gf2Basis {
    rows: Vec<Option<Vec<u64>>>,
}

impl Gf2Basis {
    fn new(nbits: usize) -> Self {
        Gf2Basis {
            rows: vec![None; nbits],
        }
    }

    /// Inserts `v` if independent of the basis; returns whether it was.
    fn insert(&mut self, mut v: Vec<u64>) -> bool {
        loop {
            let Some(p) = lowest_bit(&v) else {
                return false;
            };
            match &self.rows[p] {
                Some(row) => {
                    for (a, b) in v.iter_mut().zip(row) {
                        *a ^= b;
                    }
                }
                None => {
                    self.rows[p] = Some(v);
                    return true;
                }
            }
        }
    }
}

fn lowest_bit(v: &[u64]) -> Option<usize> {
    v.iter()
        .enumerate()
        .find(|(_, &w)| w != 0)
        .map(|(k, &w)| k * 64 + w.trailing_zeros() as usize)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn graph(n: usize, edges: &[(usize, usize)]) -> Vec<Vec<usize>> {
        let mut g = vec![Vec::new(); n];
        for &(a, b) in edges {
            g[a].push(b);
            g[b].push(a);
        }
        g
    }

    fn cycle_edges(n: usize) -> Vec<(usize, usize)> {
        (0..n).map(|i| (i, (i + 1) % n)).collect()
    }

    fn sizes(r: &[Vec<usize>]) -> Vec<usize> {
        r.iter().map(|x| x.len()).collect()
    }

    fn assert_ring_order(g: &[Vec<usize>], r: &[usize]) {
        let len = r.len();
        for k in 0..len {
            assert!(
                g[r[k]].contains(&r[(k + 1) % len]),
                "{r:?} not in ring order"
            );
        }
        assert_eq!(r[0], *r.iter().min().unwrap());
        assert!(r[1] < r[len - 1]);
    }

    #[test]
    fn acyclic_has_none() {
        let g = graph(4, &[(0, 1), (1, 2), (1, 3)]);
        assert!(sssr(&g).is_empty());
        assert!(sssr(&[]).is_empty());
    }

    #[test]
    fn cyclohexane() {
        let g = graph(6, &cycle_edges(6));
        let r = sssr(&g);
        assert_eq!(r, vec![vec![0, 1, 2, 3, 4, 5]]);
    }

    #[test]
    fn ring_order_and_start() {
        // ring 5-2-4-0-3 (as a cycle), plus a tail
        let g = graph(7, &[(5, 2), (2, 4), (4, 0), (0, 3), (3, 5), (3, 6)]);
        let r = sssr(&g);
        assert_eq!(r.len(), 1);
        assert_eq!(r[0], vec![0, 3, 5, 2, 4]);
        assert_ring_order(&g, &r[0]);
    }

    #[test]
    fn decalin() {
        // two six-rings sharing 0-5
        let mut e = cycle_edges(6);
        e.extend([(5, 6), (6, 7), (7, 8), (8, 9), (9, 0)]);
        let g = graph(10, &e);
        let r = sssr(&g);
        assert_eq!(sizes(&r), vec![6, 6]);
        for x in &r {
            assert_ring_order(&g, x);
        }
    }

    #[test]
    fn norbornane() {
        // C1..C7: bridgeheads 0 and 3; bridges 0-1-2-3, 3-4-5-0, 0-6-3
        let g = graph(
            7,
            &[
                (0, 1),
                (1, 2),
                (2, 3),
                (3, 4),
                (4, 5),
                (5, 0),
                (0, 6),
                (6, 3),
            ],
        );
        assert_eq!(sizes(&sssr(&g)), vec![5, 5]);
    }

    #[test]
    fn cubane() {
        let e = [
            (0, 1),
            (1, 2),
            (2, 3),
            (3, 0),
            (4, 5),
            (5, 6),
            (6, 7),
            (7, 4),
            (0, 4),
            (1, 5),
            (2, 6),
            (3, 7),
        ];
        let g = graph(8, &e);
        let r = sssr(&g);
        assert_eq!(sizes(&r), vec![4, 4, 4, 4, 4]);
        for x in &r {
            assert_ring_order(&g, x);
        }
    }

    #[test]
    fn spiro_and_biphenyl_bridge() {
        // spiro[4.5]decane: 0 shared; five-ring 0-1-2-3-4, six-ring 0-5-6-7-8-9
        let g = graph(
            10,
            &[
                (0, 1),
                (1, 2),
                (2, 3),
                (3, 4),
                (4, 0),
                (0, 5),
                (5, 6),
                (6, 7),
                (7, 8),
                (8, 9),
                (9, 0),
            ],
        );
        assert_eq!(sizes(&sssr(&g)), vec![5, 6]);
        // two rings joined by a bridge bond
        let mut e = cycle_edges(6);
        e.extend((6..12).map(|i| (i, if i == 11 { 6 } else { i + 1 })));
        e.push((0, 6));
        let g = graph(12, &e);
        assert_eq!(sizes(&sssr(&g)), vec![6, 6]);
    }

    #[test]
    fn count_is_cyclomatic_number_on_ladders() {
        // A ladder of k squares: cyclomatic number k. Plus a disconnected triangle.
        for k in 1..30 {
            let n = 2 * (k + 1);
            let mut e = Vec::new();
            for i in 0..=k {
                e.push((2 * i, 2 * i + 1));
                if i < k {
                    e.push((2 * i, 2 * i + 2));
                    e.push((2 * i + 1, 2 * i + 3));
                }
            }
            e.extend([(n, n + 1), (n + 1, n + 2), (n + 2, n)]);
            let g = graph(n + 3, &e);
            let r = sssr(&g);
            assert_eq!(r.len(), k + 1);
            assert_eq!(r[0].len(), 3);
            assert!(r[1..].iter().all(|x| x.len() == 4));
        }
    }

    #[test]
    fn big_macrocycle_beyond_horton_limit() {
        // A 1000-ring with one chord: two rings, sizes 501 and 501.
        let n = 1000;
        let mut e = cycle_edges(n);
        e.push((0, 500));
        let g = graph(n, &e);
        assert_eq!(sizes(&sssr(&g)), vec![501, 501]);
    }
}

#[cfg(test)]
mod grid_tests {
    use super::*;

    #[test]
    fn square_lattice_at_the_horton_limit() {
        // 20×20 lattice: 400 atoms, 760 bonds, 361 four-rings.
        let w = 20;
        let mut g = vec![Vec::new(); w * w];
        for i in 0..w {
            for j in 0..w {
                let k = i * w + j;
                if j + 1 < w {
                    g[k].push(k + 1);
                    g[k + 1].push(k);
                }
                if i + 1 < w {
                    g[k].push(k + w);
                    g[k + w].push(k);
                }
            }
        }
        let t = std::time::Instant::now();
        let r = sssr(&g);
        eprintln!("20x20 lattice SSSR: {:?}", t.elapsed());
        assert_eq!(r.len(), 361);
        assert!(r.iter().all(|x| x.len() == 4));
    }
}
