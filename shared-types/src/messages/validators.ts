import { createValidator } from '../validation.js';
import { EvaluationJobSchema } from './evaluation-job.js';
import { EvaluationResultSchema } from './evaluation-result.js';
import { HeartbeatReplySchema, WorkerHeartbeatSchema } from './worker-heartbeat.js';
import { RunConfigSchema } from './run-config.js';
import { StatusResponseSchema } from './status-response.js';
import { SearchSpaceSchema } from '../genome/search-space-schema.js';

/** One compiled validator per message that crosses a process boundary. */
export const evaluationJobValidator = createValidator('evaluation job', EvaluationJobSchema);
export const evaluationResultValidator = createValidator('evaluation result', EvaluationResultSchema);
export const workerHeartbeatValidator = createValidator('worker heartbeat', WorkerHeartbeatSchema);
export const heartbeatReplyValidator = createValidator('heartbeat reply', HeartbeatReplySchema);
export const runConfigValidator = createValidator('run configuration', RunConfigSchema);
export const statusResponseValidator = createValidator('status response', StatusResponseSchema);
export const searchSpaceValidator = createValidator('search space', SearchSpaceSchema);
