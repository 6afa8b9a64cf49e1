# 25_solvents.sh - 'frostfit solvents': table, Kf recomputed, JSON, user file.
# Water: Kf calc 1.8605 (IAPWS-95/06 dH_fus, computed) beside 1.860 (USP <785>).
CASE="solvents --help"; run "$FF" solvents --help
expect_rc 0; expect_out '^usage: frostfit solvents'
CASE="solvents table"; run "$FF" solvents
expect_rc 0; expect_out '^water +0\.000 +1\.860 +1\.8605 +\+0\.03%'
expect_out '^cyclohexane +6\.540 +20\.800'; expect_out 'carcinogen'
expect_out '^caution:'; expect_out 'CO2'; expect_out 'safety data sheet'
CASE="solvents one by alias, json"; run "$FF" solvents --json H2O
expect_rc 0; expect_json; expect_out '"kf_calc_k_kg_mol": 1\.8605'
expect_out '"frozen_fraction_per_k": 0\.0126'; expect_out '"caution"'
CASE="solvents unknown name"; run "$FF" solvents unobtainium
expect_rc 2; expect_err "unknown solvent 'unobtainium'"; expect_no_out
CASE="solvents unknown option"; run "$FF" solvents --colour
expect_rc 1; expect_err "unknown option '--colour'"
printf 'name,tf_c,kf_k_kg_mol,dh_fus_j_mol,m_g_mol\ncyclohexane,6.47,20.15,2680,84.16\nmenthol,42.5,6.9,,\n' >"$TMP/mine.csv"
CASE="solvents user file overrides"; run "$FF" solvents --file "$TMP/mine.csv"
expect_rc 0; expect_out '^cyclohexane +6\.470 +20\.150'; expect_out '^menthol +42\.500 +6\.900 +- '
printf 'name,tf_c,kf_k_kg_mol,dh_fus_j_mol,m_g_mol\nx,1.5,abc,1,2\n' >"$TMP/bad.csv"
CASE="solvents bad user file"; run "$FF" solvents --file "$TMP/bad.csv"
expect_rc 2; expect_err "bad\.csv:2:3: expected a number in column 'kf_k_kg_mol', found 'abc'"; expect_no_out
printf 'name,tf_c,kf_k_kg_mol,dh_fus_j_mol,m_g_mol,cp_liq_j_g_k,cp_sol_j_g_k\ncyclohexane,6.47,20.15,2680,84.16,1.85,1.6\n' >"$TMP/mine2.csv"
CASE="simulate with a user solvent"; run "$FF" simulate --solvents-file "$TMP/mine2.csv" --solvent cyclohexane --json --out "$TMP/cy.csv"
expect_rc 0; expect_out '"kf_k_kg_mol": 20\.15'
CASE="simulate solvent lacking constants"; run "$FF" simulate --solvents-file "$TMP/mine.csv" --solvent menthol
expect_rc 2; expect_err 'menthol'; expect_no_out
printf '\357\273\277name;tf_c;kf_k_kg_mol;dh_fus_j_mol;m_g_mol\nCyclohexan;6,47;20,15;2680;84,16\n' >"$TMP/semi.csv"
CASE="solvents semicolon file with decimal commas"; run "$FF" solvents --solvents-file "$TMP/semi.csv" cyclohexan
expect_rc 0; expect_out '^cyclohexan +6\.470 +20\.150 +20\.41'
