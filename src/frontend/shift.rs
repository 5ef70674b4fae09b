//! FFT-shift helpers: the index maps between natural FFT order (bin 0 = 0 Hz, bins above
//! N/2 are negative frequencies) and shifted order (index 0 = most negative frequency,
//! index N/2 = 0 Hz), identical to `numpy.fft.fftshift` / `ifftshift` for even and odd N.

/// Natural-order bin held at shifted index `i` for an `n`-point transform:
/// `shifted[i] = natural[natural_of_shifted(i, n)]`, as `numpy.fft.fftshift`.
/// Index `n / 2` (integer division) holds bin 0 (0 Hz).
#[inline]
pub fn natural_of_shifted(i: usize, n: usize) -> usize {
    (i + n - n / 2) % n
}

/// Shifted index of natural-order bin `k` (inverse of [`natural_of_shifted`]).
#[inline]
pub fn shifted_of_natural(k: usize, n: usize) -> usize {
    (k + n / 2) % n
}

/// Signed frequency index of natural-order bin `k` (as `numpy.fft.fftfreq(n) * n`):
/// `k` for `k < ceil(n/2)`, else `k - n`.
#[inline]
pub fn signed_bin(k: usize, n: usize) -> i64 {
    if k < n.div_ceil(2) {
        k as i64
    } else {
        k as i64 - n as i64
    }
}

/// FFT-shifts every row of a row-major buffer in place (`row_len` values per row), as
/// `numpy.fft.fftshift(a, axes=-1)`. Rows of a length that does not divide `data` are left
/// untouched (the trailing remainder is ignored).
pub fn fftshift_rows<T>(data: &mut [T], row_len: usize) {
    if row_len == 0 {
        return;
    }
    for row in data.chunks_exact_mut(row_len) {
        // fftshift is a right rotation by n/2 (numpy.roll(x, n//2)).
        row.rotate_right(row_len / 2);
    }
}

/// Inverse of [`fftshift_rows`] (`numpy.fft.ifftshift` along rows).
pub fn ifftshift_rows<T>(data: &mut [T], row_len: usize) {
    if row_len == 0 {
        return;
    }
    for row in data.chunks_exact_mut(row_len) {
        row.rotate_left(row_len / 2);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: numpy.fft.fftshift documentation, numpy 2.x (fftshift([0,1,2,3,4]) ==
    // [3,4,0,1,2]; for even length [0,1,2,3] -> [2,3,0,1]) -- values written from the
    // definition roll(x, n//2).
    #[test]
    fn matches_numpy_fftshift() {
        let mut odd = vec![0, 1, 2, 3, 4];
        fftshift_rows(&mut odd, 5);
        assert_eq!(odd, vec![3, 4, 0, 1, 2]);
        let mut even = vec![0, 1, 2, 3];
        fftshift_rows(&mut even, 4);
        assert_eq!(even, vec![2, 3, 0, 1]);
        ifftshift_rows(&mut odd, 5);
        assert_eq!(odd, vec![0, 1, 2, 3, 4]);
        for n in [4usize, 5, 8, 9] {
            for i in 0..n {
                let k = natural_of_shifted(i, n);
                assert_eq!(shifted_of_natural(k, n), i);
                // shifted index i has signed frequency i - n/2
                assert_eq!(signed_bin(k, n), i as i64 - (n / 2) as i64);
            }
        }
    }
}
