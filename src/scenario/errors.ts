/** A bad scenario: every problem as `path: message`, with the bad value and unit where known. */
export interface ScenarioProblem {
  readonly path: string;
  readonly message: string;
}

export class ScenarioError extends Error {
  readonly problems: readonly ScenarioProblem[];
  constructor(problems: readonly ScenarioProblem[]) {
    super(problems.map((p) => `${p.path || '(root)'}: ${p.message}`).join('\n'));
    this.name = 'ScenarioError';
    this.problems = problems;
  }
}
