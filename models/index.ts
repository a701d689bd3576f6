/** The pure core's public face, for the server, the command line and the page. */
export { simulate, simulateModel, type SimulationResult, type Diagnostics } from './simulate.ts';
export { normaliseScenario, parseScenario } from './scenario/normalize.ts';
export { scenarioSchema, type Scenario, type ScenarioInput } from './scenario/schema.ts';
export { resultToJson, resultToJsonText, resultToCsv, type SimulationResultJson } from './result/result-format.ts';
export { describeProblems, type Problem, type Outcome } from './scenario/problems.ts';
export { scenarioJsonSchema } from './scenario/json-schema.ts';
export { limits } from './scenario/limits.ts';
