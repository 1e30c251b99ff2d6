/**
 * One websocket connection: parse and rate-limit commands, run them in order against the
 * connection's session, and send messages with backpressure.
 *
 * Sending follows the ws library's own advice: only to an OPEN socket, with a send callback, and
 * `bufferedAmount` checked before a frame goes out. Frames are droppable (the session merges the
 * records into the next frame instead); status, error, scenario and margins messages are always
 * sent, and a client that stops reading altogether is cut off once even those exceed a hard cap,
 * so server memory stays bounded. One error listener per socket; the heartbeat timer and the
 * session's timer are cleared on close.
 */
import { randomUUID } from 'node:crypto';
import { WebSocket } from 'ws';
import { HARDWARE_NOTICE } from '../analysis/cautions.ts';
import { type Command, PROTOCOL_VERSION, type ServerMessage, parseCommand } from './protocol.ts';
import { TokenBucket } from './rateLimit.ts';
import type { LiveSession, SessionTransport } from './sessionPool.ts';

export interface ConnectionLimits {
  /** Larger text messages get an error (the session stays up); ws closes past maxPayloadBytes. */
  maxMessageBytes: number;
  commandsPerSecond: number;
  commandBurst: number;
  /** Commands waiting behind a slow one (a scenario load) before further ones are refused. */
  maxQueuedCommands: number;
  /** A frame is held back while the socket has this many bytes queued. */
  frameHighWaterBytes: number;
  /** A client with this many bytes queued is disconnected. */
  hardCapBytes: number;
  heartbeatMs: number;
}

export interface ConnectionContext {
  limits: ConnectionLimits;
  serverName: string;
  frameHz: number;
  traceMaxRecords: number;
  cases(): Promise<string[]>;
  /** The connection's session: in-process, or on a session host (server.ts decides). */
  createSession(id: string, transport: SessionTransport & { canSendFrame(): boolean }): LiveSession;
  register(s: LiveSession): void;
  unregister(s: LiveSession): void;
  runningChanged(delta: number): void;
  log(line: string): void;
}

export interface ConnectionStats {
  /** Bytes queued in the socket now (what a slow reader costs the server). */
  bufferedBytes(): number;
  framesSent: number;
  framesHeld: number;
  messagesSent: number;
}

export function attachConnection(ws: WebSocket, ctx: ConnectionContext): { session: LiveSession; stats: ConnectionStats } {
  const L = ctx.limits;
  const id = randomUUID();
  let framesInFlight = 0;
  let queued = 0;
  let chain: Promise<void> = Promise.resolve();
  let alive = true;
  let closed = false;
  let wasRunning = false;
  const bucket = new TokenBucket(L.commandsPerSecond, L.commandBurst, Date.now());
  const stats: ConnectionStats = {
    bufferedBytes: () => ws.bufferedAmount,
    framesSent: 0,
    framesHeld: 0,
    messagesSent: 0,
  };

  const sendText = (text: string, isFrame: boolean, frameLeft?: (bufferedBytes: number) => void): void => {
    if (ws.readyState !== WebSocket.OPEN) return;
    if (ws.bufferedAmount > L.hardCapBytes) {
      ctx.log(`session ${id}: client is not reading (${ws.bufferedAmount} bytes queued); disconnecting`);
      ws.terminate();
      return;
    }
    if (isFrame) {
      framesInFlight++;
      stats.framesSent++;
    }
    stats.messagesSent++;
    ws.send(text, (err) => {
      if (isFrame) {
        framesInFlight--;
        frameLeft?.(ws.bufferedAmount);
      }
      // A client that went away mid-send is not worth a log line; anything else is.
      if (err && !closed && ws.readyState === WebSocket.OPEN) ctx.log(`session ${id}: send failed: ${err.message}`);
    });
  };
  const send = (msg: ServerMessage): void => sendText(JSON.stringify(msg), msg.type === 'frame');

  const canSendFrame = (): boolean => {
    const ok = ws.readyState === WebSocket.OPEN && framesInFlight < 2 && ws.bufferedAmount < L.frameHighWaterBytes;
    if (!ok) stats.framesHeld++;
    return ok;
  };

  const session = ctx.createSession(id, {
    send,
    sendText,
    canSendFrame,
    frameHeld: () => {
      stats.framesHeld++;
    },
    runningChanged(running) {
      if (running === wasRunning) return;
      wasRunning = running;
      ctx.runningChanged(running ? 1 : -1);
    },
  });
  ctx.register(session);

  const sendError = (code: Parameters<LiveSession['error']>[0], message: string, extra: Parameters<LiveSession['error']>[2] = {}): void =>
    session.error(code, message, extra);

  const heartbeat = setInterval(() => {
    if (!alive) {
      ctx.log(`session ${id}: no answer to ping; terminating`);
      ws.terminate();
      return;
    }
    alive = false;
    if (ws.readyState === WebSocket.OPEN) ws.ping();
  }, L.heartbeatMs);

  ws.on('pong', () => {
    alive = true;
  });

  ws.on('message', (data, isBinary) => {
    alive = true;
    if (closed) return;
    if (isBinary) {
      sendError('badEnvelope', 'binary messages are not accepted; send JSON text');
      return;
    }
    const size = Array.isArray(data) ? data.reduce((n, b) => n + b.length, 0) : (data as Buffer | ArrayBuffer).byteLength;
    if (size > L.maxMessageBytes) {
      sendError('tooLarge', `message of ${size} bytes is over the ${L.maxMessageBytes}-byte limit`);
      return;
    }
    if (!bucket.take(Date.now())) {
      sendError('rateLimited', `too many commands: at most ${L.commandsPerSecond} a second (burst ${L.commandBurst}); command ignored`);
      return;
    }
    const text = Array.isArray(data) ? Buffer.concat(data).toString('utf8') : Buffer.from(data as Buffer).toString('utf8');
    const parsed = parseCommand(text);
    if (!parsed.ok) {
      sendError(parsed.code, parsed.message, {
        ...(parsed.problems ? { problems: parsed.problems } : {}),
        ...(parsed.ref !== undefined ? { ref: parsed.ref } : {}),
        ...(parsed.id !== undefined ? { id: parsed.id } : {}),
      });
      return;
    }
    if (queued >= L.maxQueuedCommands) {
      sendError('rateLimited', `busy: ${queued} commands are waiting; command ignored`, { ref: parsed.command.type });
      return;
    }
    const cmd: Command = parsed.command;
    queued++;
    chain = chain
      .then(() => session.handle(cmd))
      .catch((e: unknown) => ctx.log(`session ${id}: command ${cmd.type} failed: ${(e as Error).message}`))
      .finally(() => {
        queued--;
      });
  });

  ws.on('error', (err) => {
    ctx.log(`session ${id}: socket error: ${err.message}`);
  });

  ws.on('close', () => {
    closed = true;
    clearInterval(heartbeat);
    if (wasRunning) {
      wasRunning = false;
      ctx.runningChanged(-1);
    }
    session.dispose();
    ctx.unregister(session);
  });

  // Greet, then load the default case (a failure is reported; the connection stays up).
  void (async () => {
    try {
      send({
        v: PROTOCOL_VERSION,
        type: 'hello',
        sessionId: id,
        server: ctx.serverName,
        cases: await ctx.cases(),
        limits: {
          maxMessageBytes: L.maxMessageBytes,
          commandsPerSecond: L.commandsPerSecond,
          frameHz: ctx.frameHz,
          traceMaxRecords: ctx.traceMaxRecords,
        },
        hardwareNotice: HARDWARE_NOTICE,
      });
      if (closed) return;
      await session.init();
      if (closed) session.dispose();
    } catch (e) {
      sendError('internal', `could not start the session: ${(e as Error).message}`);
    }
  })();

  return { session, stats };
}
