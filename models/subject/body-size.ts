/**
 * Body-size covariates from weight (kg) and height (cm), by their published formulas.
 * Pure arithmetic; the units are fixed here and converted by the caller.
 */

/** Body-mass index, kg/m² (Quetelet's index). */
export function bodyMassIndex(weightKg: number, heightCm: number): number {
  const m = heightCm / 100;
  return weightKg / (m * m);
}

/** Body surface area, m²: 0.007184 · W^0.425 · H^0.725 (Du Bois & Du Bois 1916, Arch Intern Med 17:863). */
export function bodySurfaceArea(weightKg: number, heightCm: number): number {
  return 0.007184 * Math.pow(weightKg, 0.425) * Math.pow(heightCm, 0.725);
}

/** Ideal body weight, kg: 50 (men) or 45.5 (women) + 2.3 kg per inch over 60 inches (Devine 1974, Drug Intell Clin Pharm 8:650). */
export function idealBodyWeight(heightCm: number, sex: 'female' | 'male'): number {
  const inchesOver5ft = heightCm / 2.54 - 60;
  return (sex === 'male' ? 50 : 45.5) + 2.3 * inchesOver5ft;
}

/**
 * Lean body weight, kg: 9270·W / (6680 + 216·BMI) for men, 9270·W / (8780 + 244·BMI) for
 * women (Janmahasatian et al. 2005, Clin Pharmacokinet 44:1051).
 */
export function leanBodyWeight(weightKg: number, heightCm: number, sex: 'female' | 'male'): number {
  const bmi = bodyMassIndex(weightKg, heightCm);
  return sex === 'male' ? (9270 * weightKg) / (6680 + 216 * bmi) : (9270 * weightKg) / (8780 + 244 * bmi);
}
