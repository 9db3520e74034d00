//! Classical multidimensional scaling (Torgerson 1952; Gower 1966), the
//! layout of the report's topic map: points in the plane whose Euclidean
//! distances approximate given distances.
//!
//! With `D` the matrix of squared distances and `J = I - 11'/n` the centring
//! matrix, `B = -J D J / 2` is the Gram matrix of the centred points; the two
//! largest eigenvalues `l1 >= l2` of `B` with unit eigenvectors `v1, v2` give
//! the coordinates `(sqrt(l1) v1, sqrt(l2) v2)` (a negative eigenvalue, or one at
//! rounding level, gives a zero coordinate). When the distances are those of points in a plane,
//! the points come back exactly, up to rotation and reflection.
//!
//! The eigenvectors come from the cyclic Jacobi method, which is accurate
//! for any symmetric matrix and deterministic; for the report's matrices
//! (one row per topic) it takes a fraction of a second. Each axis is turned
//! so that its largest coordinate is positive, so the map does not flip from
//! run to run.

/// Eigenvalues and eigenvectors of a symmetric matrix by the cyclic Jacobi
/// method: returns the eigenvalues in decreasing order and, for each, its
/// unit eigenvector.
pub fn symmetric_eigen(matrix: &[Vec<f64>]) -> Vec<(f64, Vec<f64>)> {
    let n = matrix.len();
    let mut a: Vec<Vec<f64>> = matrix.to_vec();
    let mut vectors: Vec<Vec<f64>> = (0..n)
        .map(|row| (0..n).map(|column| f64::from(u8::from(row == column))).collect())
        .collect();
    let scale: f64 = a.iter().flatten().map(|value| value * value).sum::<f64>().sqrt();
    for _sweep in 0..100 {
        let off: f64 = (0..n)
            .flat_map(|p| (p + 1..n).map(move |q| (p, q)))
            .map(|(p, q)| a[p][q] * a[p][q])
            .sum::<f64>()
            .sqrt();
        if off <= 1e-14 * scale.max(f64::MIN_POSITIVE) {
            break;
        }
        for p in 0..n {
            for q in p + 1..n {
                if a[p][q] == 0.0 {
                    continue;
                }
                // The rotation that zeroes a[p][q] (Golub & Van Loan,
                // Matrix Computations, section 8.5.2).
                let theta = (a[q][q] - a[p][p]) / (2.0 * a[p][q]);
                let t = theta.signum() / (theta.abs() + (theta * theta + 1.0).sqrt());
                let c = 1.0 / (t * t + 1.0).sqrt();
                let s = t * c;
                for row in a.iter_mut() {
                    let (akp, akq) = (row[p], row[q]);
                    row[p] = c * akp - s * akq;
                    row[q] = s * akp + c * akq;
                }
                let (before_q, from_q) = a.split_at_mut(q);
                for (apk, aqk) in before_q[p].iter_mut().zip(from_q[0].iter_mut()) {
                    let (x, y) = (*apk, *aqk);
                    *apk = c * x - s * y;
                    *aqk = s * x + c * y;
                }
                for row in vectors.iter_mut() {
                    let (vp, vq) = (row[p], row[q]);
                    row[p] = c * vp - s * vq;
                    row[q] = s * vp + c * vq;
                }
            }
        }
    }
    let mut pairs: Vec<(f64, Vec<f64>)> = (0..n)
        .map(|column| (a[column][column], vectors.iter().map(|row| row[column]).collect()))
        .collect();
    pairs.sort_by(|x, y| y.0.total_cmp(&x.0));
    pairs
}

/// Points in the plane for `distances` (a symmetric matrix with a zero
/// diagonal), by classical scaling.
pub fn classical_scaling(distances: &[Vec<f64>]) -> Vec<(f64, f64)> {
    let n = distances.len();
    if n == 0 {
        return Vec::new();
    }
    let squared: Vec<Vec<f64>> = distances
        .iter()
        .map(|row| row.iter().map(|d| d * d).collect())
        .collect();
    let row_means: Vec<f64> = squared
        .iter()
        .map(|row| row.iter().sum::<f64>() / n as f64)
        .collect();
    let grand_mean = row_means.iter().sum::<f64>() / n as f64;
    let gram: Vec<Vec<f64>> = (0..n)
        .map(|i| {
            (0..n)
                .map(|j| -0.5 * (squared[i][j] - row_means[i] - row_means[j] + grand_mean))
                .collect()
        })
        .collect();
    let eigen = symmetric_eigen(&gram);
    // Eigenvalues at rounding level of the largest count as zero.
    let negligible = 1e-12 * eigen.first().map_or(0.0, |(value, _)| value.abs());
    let axis = |rank: usize| -> Vec<f64> {
        match eigen.get(rank) {
            Some((value, vector)) if *value > negligible => {
                let root = value.sqrt();
                let mut coordinates: Vec<f64> = vector.iter().map(|v| v * root).collect();
                let largest = coordinates
                    .iter()
                    .copied()
                    .max_by(|a, b| a.abs().total_cmp(&b.abs()))
                    .unwrap_or(0.0);
                if largest < 0.0 {
                    coordinates.iter_mut().for_each(|c| *c = -*c);
                }
                coordinates
            }
            _ => vec![0.0; n],
        }
    };
    let (first, second) = (axis(0), axis(1));
    first.into_iter().zip(second).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn euclid(a: (f64, f64), b: (f64, f64)) -> f64 {
        ((a.0 - b.0).powi(2) + (a.1 - b.1).powi(2)).sqrt()
    }

    #[test]
    fn eigenpairs_of_a_small_symmetric_matrix() {
        // Source: a textbook example (Strang, Introduction to Linear Algebra,
        // chapter 6): [[2, 1], [1, 2]] has eigenvalues 3 and 1 with
        // eigenvectors (1, 1)/sqrt 2 and (1, -1)/sqrt 2.
        let eigen = symmetric_eigen(&[vec![2.0, 1.0], vec![1.0, 2.0]]);
        assert!((eigen[0].0 - 3.0).abs() < 1e-12 && (eigen[1].0 - 1.0).abs() < 1e-12);
        let root = 0.5f64.sqrt();
        assert!((eigen[0].1[0].abs() - root).abs() < 1e-12);
        assert!((eigen[0].1[0] - eigen[0].1[1]).abs() < 1e-12);
        assert!((eigen[1].1[0] + eigen[1].1[1]).abs() < 1e-12);
        // Source: the trace of a matrix is the sum of its eigenvalues, and
        // A v = l v for every pair (common practice, checked on a 4 x 4).
        let matrix = vec![
            vec![4.0, 1.0, -2.0, 2.0],
            vec![1.0, 2.0, 0.0, 1.0],
            vec![-2.0, 0.0, 3.0, -2.0],
            vec![2.0, 1.0, -2.0, -1.0],
        ];
        let eigen = symmetric_eigen(&matrix);
        let trace: f64 = eigen.iter().map(|(value, _)| value).sum();
        assert!((trace - 8.0).abs() < 1e-10);
        for (value, vector) in &eigen {
            for (row, coefficients) in matrix.iter().enumerate() {
                let product: f64 = coefficients.iter().zip(vector).map(|(a, v)| a * v).sum();
                assert!((product - value * vector[row]).abs() < 1e-10);
            }
        }
    }

    #[test]
    fn planar_points_come_back_from_their_distances() {
        // Source: Torgerson (1952), Psychometrika 17(4); Borg & Groenen,
        // Modern Multidimensional Scaling (2005), section 12.1: for Euclidean
        // distances of points in two dimensions, classical scaling into two
        // dimensions reproduces every distance exactly.
        let points = [
            (0.0, 0.0),
            (3.0, 0.0),
            (3.0, 4.0),
            (-1.0, 2.5),
            (0.5, -2.0),
            (2.0, 2.0),
        ];
        let distances: Vec<Vec<f64>> = points
            .iter()
            .map(|&a| points.iter().map(|&b| euclid(a, b)).collect())
            .collect();
        let placed = classical_scaling(&distances);
        for i in 0..points.len() {
            for j in 0..points.len() {
                assert!(
                    (euclid(placed[i], placed[j]) - distances[i][j]).abs() < 1e-9,
                    "{i},{j}"
                );
            }
        }
        // The layout is centred (the centring matrix J removes the mean).
        let mean_x: f64 = placed.iter().map(|p| p.0).sum::<f64>() / points.len() as f64;
        assert!(mean_x.abs() < 1e-9);
    }

    #[test]
    fn collinear_points_lie_on_the_first_axis() {
        // Source: Borg & Groenen (2005), section 12.1 — points on a line give
        // a single positive eigenvalue, so the second coordinate is zero.
        let positions = [0.0, 1.0, 4.0, 6.0];
        let distances: Vec<Vec<f64>> = positions
            .iter()
            .map(|a: &f64| positions.iter().map(|b| (a - b).abs()).collect())
            .collect();
        let placed = classical_scaling(&distances);
        for (i, a) in positions.iter().enumerate() {
            assert!(placed[i].1.abs() < 1e-9);
            for (j, b) in positions.iter().enumerate() {
                assert!(((placed[i].0 - placed[j].0).abs() - (a - b).abs()).abs() < 1e-9);
            }
        }
        assert_eq!(classical_scaling(&[]), Vec::<(f64, f64)>::new());
        assert_eq!(classical_scaling(&[vec![0.0]]), vec![(0.0, 0.0)]);
    }
}
