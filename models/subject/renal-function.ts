/** Renal function from serum creatinine, by its published formula. */

/**
 * Creatinine clearance, mL/min: (140 − age) · weight / (72 · serum creatinine), × 0.85 for
 * women; age in years, weight in kg, serum creatinine in mg/dL (Cockcroft & Gault 1976,
 * Nephron 16:31).
 */
export function creatinineClearance(ageYears: number, weightKg: number, serumCreatinineMgDl: number, sex: 'female' | 'male'): number {
  const male = ((140 - ageYears) * weightKg) / (72 * serumCreatinineMgDl);
  return sex === 'female' ? 0.85 * male : male;
}

/** mg/dL of creatinine per µmol/L: its molar mass, 113.12 g/mol (so 1 mg/dL = 88.4 µmol/L). */
export const CREATININE_MG_DL_PER_UMOL_L = 113.12 / 10_000;
