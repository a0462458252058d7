/** A worker thread of `shimmy batch`: says it is ready, then runs the jobs the pool sends one at a time and posts each outcome. */
import { parentPort } from 'node:worker_threads';
import { runJob, type BatchJob, type JobOutcome } from './job.js';

export interface JobMessage {
  job: BatchJob;
  baseDir: string;
}

export type WorkerReply = { type: 'ready' } | { type: 'done'; outcome: JobOutcome };

if (!parentPort) throw new Error('src/batch/worker.ts runs only as a worker thread of shimmy batch');
const port = parentPort;
const reply = (r: WorkerReply) => port.postMessage(r);
port.on('message', (msg: JobMessage) => {
  void runJob(msg.job, msg.baseDir).then((outcome) => reply({ type: 'done', outcome }));
});
reply({ type: 'ready' });
