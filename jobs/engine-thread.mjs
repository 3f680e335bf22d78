// Start of an engine thread (jobs/engine-pool.ts): worker threads do not inherit the tsx loader
// the worker process runs under, so the thread registers it before loading the TypeScript, and
// hands piscina the task function.
const { register } = await import('tsx/esm/api');
register();
const { default: engineTask } = await import('./engine-thread.ts');
export default engineTask;
