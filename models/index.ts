/** The pure core's public face, for the server, the command line and the page. */
export { simulate, simulateModel, type SimulationResult, type Diagnostics } from './simulate.ts';
export { normaliseScenario, parseScenario } from './normalize.ts';
export { scenarioSchema, type Scenario, type ScenarioInput } from './schema.ts';
export { resultToJson, resultToJsonText, resultToCsv, type SimulationResultJson } from './result-format.ts';
export { describeProblems, type Problem, type Outcome } from './problems.ts';
export { scenarioJsonSchema } from './json-schema.ts';
export { limits } from './limits.ts';
