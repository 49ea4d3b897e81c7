/** Pool worker: runs one fit context. Kept tiny so that everything it does is testable in-process. */
import { runContext, type ContextResult, type ContextTask } from './context-run.js';

export default function work(task: ContextTask): ContextResult {
  return runContext(task);
}
