//! Connected components of a problem's link graph (union-find over links with positive
//! weight), shared by the decomposition and the relaxations.

use crate::solve::problem::Problem;

/// Connected components by union-find over the links: (component of each patch, count).
/// Components are numbered in order of their lowest patch.
pub fn components(problem: &Problem) -> (Vec<usize>, usize) {
    let n = problem.len();
    let mut parent: Vec<usize> = (0..n).collect();
    fn find(parent: &mut [usize], mut i: usize) -> usize {
        while parent[i] != i {
            parent[i] = parent[parent[i]];
            i = parent[i];
        }
        i
    }
    for l in &problem.model.links {
        if l.weight <= 0.0 {
            continue;
        }
        let (a, b) = (find(&mut parent, l.a), find(&mut parent, l.b));
        if a != b {
            parent[a.max(b)] = a.min(b);
        }
    }
    let mut label = vec![usize::MAX; n];
    let mut count = 0;
    let mut of = vec![0; n];
    for i in 0..n {
        let root = find(&mut parent, i);
        if label[root] == usize::MAX {
            label[root] = count;
            count += 1;
        }
        of[i] = label[root];
    }
    (of, count)
}

/// The patches of each connected component (union-find over links with positive weight), in
/// order of their lowest patch.
pub fn component_members(problem: &Problem) -> Vec<Vec<usize>> {
    let (of, count) = components(problem);
    let mut members = vec![Vec::new(); count];
    for (i, &c) in of.iter().enumerate() {
        members[c].push(i);
    }
    members
}
