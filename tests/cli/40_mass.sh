# 40_mass.sh - 'frostfit mass': molar mass of an unknown, budget, errors.

CASE="mass --help"; run "$FF" mass --help
expect_rc 0; expect_out '^usage: frostfit mass'; expect_out 'exit codes'

# Teaching exercise data (REFERENCES section 1.4, F32 data, arithmetic):
# 8.003 g lauric acid, 1.010 g solute, 43.84 -> 39.05 C, Kf 3.9 -> 102.75.
CASE="mass lauric acid teaching example"
run "$FF" mass --solvent "lauric acid" --kf 3.9 --u-kf 0.01 --solute-g 1.010 \
    --solvent-g 8.003 --tf-blank 43.84 --tf-sample 39.05
expect_rc 0; expect_out '= 102\.75 g/mol'; expect_out 'given with --kf'
expect_out 'agrees with the GUM'; expect_out '^caution: '

# GUM worked budget (REFERENCES section 8, JCGM 100:2008 method):
# M = 128.00, u = 0.83 g/mol (0.65 %), U(k=2) = 1.65, dT part 0.51 %.
CASE="mass GUM budget example --json"
run "$FF" mass --solvent benzene --kf 5.12 --u-kf 0.02 --solute-g 0.5000 \
    --u-solute-g 0.0002 --solvent-g 25.00 --u-solvent-g 0.01 --dt 0.800 \
    --thermo-res 0.01 --json
expect_rc 0; expect_json
expect_out '"molar_mass_g_mol": 128\.0+,'
expect_out '"u_molar_mass_g_mol": 0\.82(5|6)'
expect_out '"expanded_molar_mass_g_mol": 1\.65'
expect_out '"relative_u": 0\.0051'
expect_out '"agrees_with_gum": true'
expect_out '"kf_source": "given with --kf"'

CASE="mass Kf from the solvent table names its source"
run "$FF" mass --solvent water --solute-g 1.2345 --solvent-g 101.7 --dt 0.2113 \
    --u-kf 0.002 --thermo-res 0.001 --mc 0
expect_rc 0; expect_out "solvent table 'water'"; expect_out 'USP <785>'
expect_out '= 106\.8'

CASE="mass without --u-kf warns that u is understated"
run "$FF" mass --solvent water --solute-g 1.2345 --solvent-g 101.7 --dt 0.2113
expect_rc 0; expect_err 'no --u-kf'

CASE="mass unknown solvent"
run "$FF" mass --solvent unobtainium --solute-g 1 --solvent-g 20 --dt 0.5
expect_rc 2; expect_err "unknown solvent 'unobtainium'"; expect_no_out

CASE="mass negative solute mass"
run "$FF" mass --solvent water --solute-g -1 --solvent-g 20 --dt 0.5
expect_rc 2; expect_err '--solute-g must be positive'; expect_no_out

CASE="mass zero solvent mass"
run "$FF" mass --solvent water --solute-g 1 --solvent-g 0 --dt 0.5
expect_rc 2; expect_err '--solvent-g must be positive'; expect_no_out

CASE="mass sample freezing above its blank"
run "$FF" mass --solvent water --solute-g 1 --solvent-g 20 --tf-blank -0.01 \
    --tf-sample 0.05
expect_rc 2; expect_err 'must freeze below'; expect_no_out

CASE="mass depression lost in the thermometer resolution"
run "$FF" mass --solvent water --solute-g 0.01 --solvent-g 200 --dt 0.01 \
    --thermo-res 0.01
expect_rc 3; expect_err 'less than 3 times'; expect_no_out

CASE="mass --dt and --tf-* together"
run "$FF" mass --solvent water --solute-g 1 --solvent-g 20 --dt 0.5 \
    --tf-blank 0 --tf-sample -0.5
expect_rc 1; expect_err 'either --dt or both'; expect_no_out

CASE="mass bad number"
run "$FF" mass --solvent water --solute-g 1,5 --solvent-g 20 --dt 0.5
expect_rc 1; expect_err "expects a number, found '1,5'"; expect_no_out

CASE="mass unknown option"
run "$FF" mass --solvent water --frobnicate 3
expect_rc 1; expect_err "unknown option '--frobnicate'"

# Typing slips such as 1e300 are bad input, never a 300-digit result.
CASE="mass absurd solvent mass"
run "$FF" mass --solvent cyclohexane --solvent-g 1e300 --solute-g 0.1 --dt 1
expect_rc 2; expect_no_out; expect_err '^frostfit: --solvent-g must be at most 100000 g'
CASE="mass absurd u-tf"
run "$FF" mass --solvent cyclohexane --solvent-g 20 --solute-g 0.1 --dt 1 --u-tf 1e300
expect_rc 2; expect_no_out; expect_err '^frostfit: --u-tf must be at most 10 K'
