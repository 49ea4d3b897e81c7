/** A tree-core parameter outside its valid range, reported with the parameter's name and value. */
export class TreeParamError extends Error {
  constructor(
    message: string,
    readonly param: string,
    readonly value: unknown,
  ) {
    super(`${message} (got ${param} = ${JSON.stringify(value)})`);
    this.name = 'TreeParamError';
  }
}
