// The queue's names for the processes (web, worker) and the handlers; services import jobs/queue.ts.
export { installJobQueues, jobs, QUEUES, sendJob, stopJobs, type CloseEventJob } from './queue';
