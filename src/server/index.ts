/** The live dashboard server: `startServer` and the wire protocol. */
export { DEFAULTS, ListenError, type RunningServer, type ServeOptions, startServer } from './server.ts';
export * from './protocol.ts';
export { replayScenario, mergeProfile } from './replay.ts';
export { replayRun, runParts } from './liveRun.ts';
