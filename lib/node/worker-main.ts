/** The Node worker thread: the shared handler over worker_threads' port. */
import { parentPort } from 'node:worker_threads';
import { createHandler } from '../worker/entry.js';
import { nodeEnvironment } from './environment.js';

if (!parentPort) throw new Error('worker-main.js runs as a worker thread');
const port = parentPort;
const handle = createHandler(nodeEnvironment((reply, transfer) => port.postMessage(reply, transfer)));
port.on('message', (data) => { void handle(data); });
