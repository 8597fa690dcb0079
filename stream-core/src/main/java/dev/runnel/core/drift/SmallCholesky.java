package dev.runnel.core.drift;

/**
 * The inverse of a small dense symmetric positive-definite matrix by its Cholesky factor
 * (M = L·Lᵀ, then M⁻¹ = L⁻ᵀ·L⁻¹), into arrays the caller owns, so a caller on a warm path
 * allocates nothing. Shared by the change attribution (cold path) and the weight-break scan (once
 * per block); both read only the top-left {@code p × p} corner of each array.
 */
final class SmallCholesky {
  private SmallCholesky() { }

  /**
   * out = m⁻¹ over the top-left {@code p × p} corner.
   *
   * @param m the matrix; only its lower triangle is read. Not modified.
   * @param l scratch for L (lower triangle written)
   * @param li scratch for L⁻¹ (lower triangle written)
   * @param out the inverse, both triangles written; may not be {@code m}, {@code l} or {@code li}
   * @return false, leaving {@code out} unspecified, when m is not positive definite
   */
  static boolean invertInto(double[][] m, int p, double[][] l, double[][] li, double[][] out) {
    for (int i = 0; i < p; i++) {
      for (int j = 0; j <= i; j++) {
        double sum = m[i][j];
        for (int k = 0; k < j; k++) {
          sum -= l[i][k] * l[j][k];
        }
        if (i == j) {
          if (!(sum > 0)) {
            return false;
          }
          l[i][i] = Math.sqrt(sum);
        } else {
          l[i][j] = sum / l[j][j];
        }
      }
    }
    // L⁻¹ by forward substitution
    for (int j = 0; j < p; j++) {
      li[j][j] = 1.0 / l[j][j];
      for (int i = j + 1; i < p; i++) {
        double sum = 0.0;
        for (int k = j; k < i; k++) {
          sum -= l[i][k] * li[k][j];
        }
        li[i][j] = sum / l[i][i];
      }
    }
    // M⁻¹ = L⁻ᵀ L⁻¹: (i, j) = Σ_{k ≥ max(i,j)} li[k][i]·li[k][j]
    for (int i = 0; i < p; i++) {
      for (int j = i; j < p; j++) {
        double sum = 0.0;
        for (int k = j; k < p; k++) {
          sum += li[k][i] * li[k][j];
        }
        out[i][j] = sum;
        out[j][i] = sum;
      }
    }
    return true;
  }
}
