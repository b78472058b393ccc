//! The chi-square quantile that chooses gate limits, against a published
//! table and closed forms.

use lookout_design::chi_square_limit;

/// Upper critical values of the chi-square distribution, as printed in the
/// NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.6.7.4
/// ("Critical Values of the Chi-Square Distribution"), rounded to three
/// decimals there. Transcribed from memory of that table; rows are degrees of
/// freedom 1 to 10, columns the probabilities below the limit 0.90, 0.95,
/// 0.99 and 0.999. (Our memory first had 26.125 for 8 degrees at 0.999; the
/// even-degree closed form below gives 26.12448, so the table's entry is
/// 26.124.)
const TABLE: [[f64; 4]; 10] = [
    [2.706, 3.841, 6.635, 10.828],
    [4.605, 5.991, 9.210, 13.816],
    [6.251, 7.815, 11.345, 16.266],
    [7.779, 9.488, 13.277, 18.467],
    [9.236, 11.070, 15.086, 20.515],
    [10.645, 12.592, 16.812, 22.458],
    [12.017, 14.067, 18.475, 24.322],
    [13.362, 15.507, 20.090, 26.124],
    [14.684, 16.919, 21.666, 27.877],
    [15.987, 18.307, 23.209, 29.588],
];

#[test]
fn chi_square_limits_match_the_published_table() {
    for (row, dof) in TABLE.iter().zip(1u32..) {
        for (&expected, probability) in row.iter().zip([0.90, 0.95, 0.99, 0.999]) {
            let limit = chi_square_limit(dof, probability).unwrap();
            // The table rounds to 3 decimals: half a unit in the last place.
            assert!(
                (limit - expected).abs() <= 5e-4 + 1e-9,
                "dof {dof}, p {probability}: {limit} vs {expected}"
            );
        }
    }
}

/// Closed forms (common practice): with 2 degrees of freedom the quantile is
/// −2 ln(1 − p); with 1 it is the square of the standard normal quantile
/// (1.959963984540054 for p = 0.95, known to many digits).
#[test]
fn chi_square_limits_match_closed_forms() {
    for p in [0.5, 0.9, 0.99, 0.999_999] {
        let exact = -2.0 * (1.0f64 - p).ln();
        let limit = chi_square_limit(2, p).unwrap();
        assert!(
            (limit - exact).abs() <= 1e-9 * exact,
            "p {p}: {limit} vs {exact}"
        );
    }
    // Even degrees 2k: P(χ² ≤ x) = 1 − e^{−x/2} Σ_{i<k} (x/2)^i / i!.
    for dof in [4u32, 6, 8, 10] {
        for p in [0.9, 0.99, 0.999] {
            let x = chi_square_limit(dof, p).unwrap();
            let h = x / 2.0;
            let mut term = 1.0;
            let mut sum = 0.0;
            for i in 0..dof / 2 {
                if i > 0 {
                    term *= h / f64::from(i);
                }
                sum += term;
            }
            let cdf = 1.0 - (-h).exp() * sum;
            assert!((cdf - p).abs() < 1e-12, "dof {dof}, p {p}: cdf {cdf}");
        }
    }
    let z = 1.959_963_984_540_054_f64;
    assert!((chi_square_limit(1, 0.95).unwrap() - z * z).abs() < 1e-9);
}

#[test]
fn chi_square_limit_refuses_nonsense() {
    assert_eq!(chi_square_limit(0, 0.9), None);
    assert_eq!(chi_square_limit(3, 0.0), None);
    assert_eq!(chi_square_limit(3, 1.0), None);
    assert_eq!(chi_square_limit(3, f64::NAN), None);
}
