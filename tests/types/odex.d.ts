// Types for the odex package (an independent extrapolation ODE solver used only as a
// reference in tests and the benchmark). Its package ships TypeScript source that does
// not pass our strict settings, so tsconfig maps the import here instead.
declare module 'odex' {
  export type Derivative = (x: number, y: number[]) => number[];
  export type OutputFunction = (
    nr: number,
    xold: number,
    x: number,
    y: number[],
    dense?: (c: number, x: number) => number,
  ) => boolean | void;
  export enum Outcome {
    Converged,
    MaxStepsExceeded,
    EarlyReturn,
  }
  export class Solver {
    constructor(n: number);
    n: number;
    uRound: number;
    maxSteps: number;
    initialStepSize: number;
    maxStepSize: number;
    maxExtrapolationColumns: number;
    stepSizeSequence: number;
    denseOutput: boolean;
    denseComponents: number[] | undefined;
    interpolationFormulaDegree: number;
    relativeTolerance: number | number[];
    absoluteTolerance: number | number[];
    debug: boolean;
    grid(dt: number, out: (xOut: number, yOut: number[]) => unknown): OutputFunction;
    solve(
      f: Derivative,
      x: number,
      y0: number[],
      xEnd: number,
      solOut?: OutputFunction,
    ): { y: number[]; outcome: Outcome; nStep: number; xEnd: number; nAccept: number; nReject: number; nEval: number };
  }
}
