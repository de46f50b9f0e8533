//! Weighted ridge regression in closed form, with its own small linear algebra.
//!
//! Hoerl & Kennard 1970, "Ridge regression: biased estimation for nonorthogonal problems",
//! Technometrics 12(1): the estimate `(X'WX + lambda I)^-1 X'Wy` on centred data, with the
//! intercept left unpenalised. The normal equations are solved by a Cholesky factorisation.

use thiserror::Error;

/// Why a fit failed.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum RidgeError {
    /// The inputs disagree in size.
    #[error("shape mismatch: {0}")]
    Shape(String),
    /// No row carries positive weight.
    #[error("no row has a positive weight")]
    NoWeight,
    /// The regularised Gram matrix is not positive definite (lambda 0 with collinear inputs).
    #[error("the normal equations are singular; use a positive lambda")]
    Singular,
}

/// A fitted multi-output linear model `y = intercept + x' coef`.
#[derive(Debug, Clone, PartialEq)]
pub struct Ridge {
    /// Number of inputs.
    pub inputs: usize,
    /// Number of outputs.
    pub outputs: usize,
    /// Coefficients, row-major `inputs x outputs`: `coef[j * outputs + k]`.
    pub coef: Vec<f64>,
    /// Intercept per output.
    pub intercept: Vec<f64>,
}

impl Ridge {
    /// Fits `y` (row-major `n x outputs`) on `x` (row-major `n x inputs`) minimising
    /// `sum_i w_i |y_i - b - x_i' B|^2 + lambda |B|^2` (weights default to 1).
    pub fn fit(
        x: &[f64],
        inputs: usize,
        y: &[f64],
        outputs: usize,
        weights: Option<&[f64]>,
        lambda: f64,
    ) -> Result<Ridge, RidgeError> {
        let n = check_shapes(x, inputs, y, outputs, weights)?;
        let w = |i: usize| weights.map_or(1.0, |w| w[i]);
        let total: f64 = (0..n).map(w).sum();
        if total.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
            return Err(RidgeError::NoWeight);
        }
        let mean = |v: &[f64], dim: usize| -> Vec<f64> {
            (0..dim)
                .map(|j| (0..n).map(|i| w(i) * v[i * dim + j]).sum::<f64>() / total)
                .collect()
        };
        let (mx, my) = (mean(x, inputs), mean(y, outputs));
        let mut gram = vec![0.0; inputs * inputs];
        let mut rhs = vec![0.0; inputs * outputs];
        let (mut xi, mut yi) = (vec![0.0; inputs], vec![0.0; outputs]);
        for (i, (xr, yr)) in x
            .chunks_exact(inputs)
            .zip(y.chunks_exact(outputs))
            .enumerate()
        {
            let wi = w(i);
            if wi == 0.0 {
                continue;
            }
            for ((o, v), m) in xi.iter_mut().zip(xr).zip(&mx) {
                *o = v - m;
            }
            for ((o, v), m) in yi.iter_mut().zip(yr).zip(&my) {
                *o = v - m;
            }
            // Upper triangle only (the Gram matrix is symmetric); mirrored below.
            for (a, &xa) in xi.iter().enumerate() {
                let wa = wi * xa;
                let row = &mut gram[a * inputs + a..(a + 1) * inputs];
                for (g, &xb) in row.iter_mut().zip(&xi[a..]) {
                    *g += wa * xb;
                }
                for (r, &yk) in rhs[a * outputs..(a + 1) * outputs].iter_mut().zip(&yi) {
                    *r += wa * yk;
                }
            }
        }
        for a in 0..inputs {
            for b in 0..a {
                gram[a * inputs + b] = gram[b * inputs + a];
            }
            gram[a * inputs + a] += lambda;
        }
        let l = cholesky(&gram, inputs).ok_or(RidgeError::Singular)?;
        let coef = cholesky_solve(&l, inputs, &rhs, outputs);
        let intercept = (0..outputs)
            .map(|k| {
                my[k]
                    - (0..inputs)
                        .map(|j| mx[j] * coef[j * outputs + k])
                        .sum::<f64>()
            })
            .collect();
        Ok(Ridge {
            inputs,
            outputs,
            coef,
            intercept,
        })
    }

    /// Predicts the outputs for one input row.
    pub fn predict(&self, x: &[f64], out: &mut [f64]) {
        for (k, o) in out.iter_mut().enumerate().take(self.outputs) {
            *o = self.intercept[k]
                + (0..self.inputs)
                    .map(|j| x[j] * self.coef[j * self.outputs + k])
                    .sum::<f64>();
        }
    }
}

fn check_shapes(
    x: &[f64],
    inputs: usize,
    y: &[f64],
    outputs: usize,
    weights: Option<&[f64]>,
) -> Result<usize, RidgeError> {
    if inputs == 0 || outputs == 0 || !x.len().is_multiple_of(inputs) {
        return Err(RidgeError::Shape(format!(
            "{} input values for {inputs} inputs",
            x.len()
        )));
    }
    let n = x.len() / inputs;
    if y.len() != n * outputs {
        return Err(RidgeError::Shape(format!(
            "{} rows of inputs but {} output values for {outputs} outputs",
            n,
            y.len()
        )));
    }
    if let Some(w) = weights
        && w.len() != n
    {
        return Err(RidgeError::Shape(format!(
            "{n} rows but {} weights",
            w.len()
        )));
    }
    Ok(n)
}

/// Lower-triangular Cholesky factor of a symmetric positive definite `d x d` matrix, or
/// `None` when it is not positive definite.
pub fn cholesky(a: &[f64], d: usize) -> Option<Vec<f64>> {
    let mut l = vec![0.0; d * d];
    for i in 0..d {
        for j in 0..=i {
            let s: f64 = (0..j).map(|k| l[i * d + k] * l[j * d + k]).sum();
            if i == j {
                let v = a[i * d + i] - s;
                if v.partial_cmp(&(1e-12 * a[i * d + i].abs().max(1e-300)))
                    != Some(std::cmp::Ordering::Greater)
                {
                    return None;
                }
                l[i * d + i] = v.sqrt();
            } else {
                l[i * d + j] = (a[i * d + j] - s) / l[j * d + j];
            }
        }
    }
    Some(l)
}

/// Solves `L L' X = B` for `X` (`d x m`, row-major) given the Cholesky factor `L`.
pub fn cholesky_solve(l: &[f64], d: usize, b: &[f64], m: usize) -> Vec<f64> {
    let mut z = vec![0.0; d * m];
    for k in 0..m {
        for i in 0..d {
            let s: f64 = (0..i).map(|j| l[i * d + j] * z[j * m + k]).sum();
            z[i * m + k] = (b[i * m + k] - s) / l[i * d + i];
        }
        for i in (0..d).rev() {
            let s: f64 = (i + 1..d).map(|j| l[j * d + i] * z[j * m + k]).sum();
            z[i * m + k] = (z[i * m + k] - s) / l[i * d + i];
        }
    }
    z
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exact_line_is_recovered_without_penalty() {
        // y = 1 + 2 x exactly: ordinary least squares (lambda = 0) recovers it.
        let x = [0.0, 1.0, 2.0, 3.0];
        let y: Vec<f64> = x.iter().map(|v| 1.0 + 2.0 * v).collect();
        let r = Ridge::fit(&x, 1, &y, 1, None, 0.0).unwrap();
        assert!((r.coef[0] - 2.0).abs() < 1e-12 && (r.intercept[0] - 1.0).abs() < 1e-12);
    }

    #[test]
    fn one_input_ridge_by_hand() {
        // One centred input: beta = Sxy / (Sxx + lambda) (Hoerl & Kennard 1970, eq. 2.2 in
        // one dimension). x = 0..3 (mean 1.5, Sxx = 5), y = 1 + 2x (Sxy = 10), lambda = 5:
        // beta = 10 / 10 = 1, intercept = mean y - beta mean x = 4 - 1.5 = 2.5.
        let x = [0.0, 1.0, 2.0, 3.0];
        let y: Vec<f64> = x.iter().map(|v| 1.0 + 2.0 * v).collect();
        let r = Ridge::fit(&x, 1, &y, 1, None, 5.0).unwrap();
        assert!((r.coef[0] - 1.0).abs() < 1e-12, "{:?}", r.coef);
        assert!((r.intercept[0] - 2.5).abs() < 1e-12);
    }

    #[test]
    fn integer_weights_equal_repeated_rows() {
        let x = [0.0, 1.0, 1.0, 0.5, 2.0, -1.0, 3.0, 0.2];
        let y = [1.0, 2.5, 0.3, 4.0];
        let w = [1.0, 3.0, 0.0, 2.0];
        let weighted = Ridge::fit(&x, 2, &y, 1, Some(&w), 0.7).unwrap();
        let xr = [0.0, 1.0, 1.0, 0.5, 1.0, 0.5, 1.0, 0.5, 3.0, 0.2, 3.0, 0.2];
        let yr = [1.0, 2.5, 2.5, 2.5, 4.0, 4.0];
        let repeated = Ridge::fit(&xr, 2, &yr, 1, None, 0.7).unwrap();
        for (a, b) in weighted.coef.iter().zip(&repeated.coef) {
            assert!((a - b).abs() < 1e-12);
        }
    }

    #[test]
    fn collinear_inputs_need_a_penalty() {
        let x = [1.0, 2.0, 2.0, 4.0, 3.0, 6.0];
        let y = [1.0, 2.0, 3.0];
        assert_eq!(
            Ridge::fit(&x, 2, &y, 1, None, 0.0),
            Err(RidgeError::Singular)
        );
        assert!(Ridge::fit(&x, 2, &y, 1, None, 0.1).is_ok());
        assert_eq!(
            Ridge::fit(&x, 2, &y[..2], 1, None, 0.1),
            Err(RidgeError::Shape(
                "3 rows of inputs but 2 output values for 1 outputs".into()
            ))
        );
    }
}
