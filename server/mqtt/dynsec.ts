/**
 * A small client of mosquitto's dynamic-security plugin over its control topic
 * (`$CONTROL/dynamic-security/v1`): one command per request, answered on `…/v1/response` and
 * matched by correlation data. An answer with an `error` rejects with a DynsecError; no answer
 * within the timeout rejects too, so a caller never waits for good.
 */
import { randomUUID } from 'node:crypto';
import mqtt, { type MqttClient } from 'mqtt';
import { z } from 'zod';

export const DYNSEC_TOPIC = '$CONTROL/dynamic-security/v1';
export const DYNSEC_RESPONSE_TOPIC = `${DYNSEC_TOPIC}/response`;

/** A command the plugin refused (its own error text), or one it did not answer in time. */
export class DynsecError extends Error {
  constructor(
    readonly command: string,
    /** The plugin's error text, or 'timeout' / 'disconnected'. */
    readonly reason: string,
  ) {
    super(`dynamic-security ${command}: ${reason}`);
    this.name = 'DynsecError';
  }
}

const ResponseFrame = z.object({
  responses: z.array(
    z.object({
      command: z.string(),
      correlationData: z.string().optional(),
      error: z.string().optional(),
      data: z.unknown().optional(),
    }),
  ),
});

export interface DynsecOptions {
  url: string;
  username: string;
  password: string;
  /** How long a command may wait for its answer, ms (default 5000). */
  timeoutMs?: number;
}

interface Pending {
  command: string;
  resolve: (data: unknown) => void;
  reject: (err: Error) => void;
  timer: NodeJS.Timeout;
}

/** One admin connection to the control topic; start() connects, stop() disconnects. */
export class DynsecClient {
  private client: MqttClient | null = null;
  private readonly pending = new Map<string, Pending>();
  /** Answers that did not parse or matched no request (counted, dropped). */
  droppedFrames = 0;

  constructor(private readonly o: DynsecOptions) {}

  /** Connects as the admin account and subscribes to the answers; rejects on a refused sign-in. */
  async start(): Promise<void> {
    const client = mqtt.connect(this.o.url, {
      clientId: `rimehold-dynsec-${randomUUID().slice(0, 8)}`,
      username: this.o.username,
      password: this.o.password,
      clean: true,
      protocolVersion: 4,
      reconnectPeriod: 1000,
      connectTimeout: this.o.timeoutMs ?? 5000,
      // Resubscribed on every reconnect: a clean session forgets the subscription.
      resubscribe: true,
    });
    this.client = client;
    client.on('message', (topic, payload) => this.onAnswer(topic, payload));
    client.on('close', () => {
      // An answer to a request sent on the lost connection may never come: fail those at once.
      for (const [id, p] of this.pending) {
        clearTimeout(p.timer);
        this.pending.delete(id);
        p.reject(new DynsecError(p.command, 'disconnected'));
      }
    });
    await new Promise<void>((resolve, reject) => {
      const onError = (err: Error) => {
        client.end(true);
        reject(new Error(`cannot sign in to mosquitto's dynamic-security control topic as ${this.o.username}: ${err.message}`));
      };
      client.once('error', onError);
      client.once('connect', () => {
        client.off('error', onError);
        client.subscribeAsync({ [DYNSEC_RESPONSE_TOPIC]: { qos: 1 } }).then(() => resolve(), reject);
      });
    });
    client.on('error', () => undefined);
  }

  /** True while connected to the broker. */
  get connected(): boolean {
    return this.client?.connected === true;
  }

  /** Sends one command; resolves with its `data` (undefined when it has none), rejects with a DynsecError. */
  async command(command: string, args: Record<string, unknown> = {}): Promise<unknown> {
    const client = this.client;
    if (!client?.connected) throw new DynsecError(command, 'disconnected');
    const correlationData = randomUUID();
    const answer = new Promise<unknown>((resolve, reject) => {
      const timer = setTimeout(() => {
        this.pending.delete(correlationData);
        reject(new DynsecError(command, 'timeout'));
      }, this.o.timeoutMs ?? 5000);
      this.pending.set(correlationData, { command, resolve, reject, timer });
    });
    try {
      await client.publishAsync(DYNSEC_TOPIC, JSON.stringify({ commands: [{ command, ...args, correlationData }] }), { qos: 1 });
    } catch (err) {
      const p = this.pending.get(correlationData);
      if (p) {
        clearTimeout(p.timer);
        this.pending.delete(correlationData);
      }
      throw new DynsecError(command, `publish failed: ${(err as Error).message}`);
    }
    return answer;
  }

  private onAnswer(topic: string, payload: Buffer): void {
    if (topic !== DYNSEC_RESPONSE_TOPIC) return;
    let frame: z.infer<typeof ResponseFrame>;
    try {
      const parsed = ResponseFrame.safeParse(JSON.parse(payload.toString('utf8')));
      if (!parsed.success) {
        this.droppedFrames++;
        return;
      }
      frame = parsed.data;
    } catch {
      this.droppedFrames++;
      return;
    }
    for (const r of frame.responses) {
      const p = r.correlationData ? this.pending.get(r.correlationData) : undefined;
      if (!p || !r.correlationData) {
        this.droppedFrames++;
        continue;
      }
      clearTimeout(p.timer);
      this.pending.delete(r.correlationData);
      if (r.error) p.reject(new DynsecError(r.command, r.error));
      else p.resolve(r.data);
    }
  }

  /** Disconnects; requests still waiting are rejected. */
  async stop(): Promise<void> {
    const client = this.client;
    this.client = null;
    if (client) await client.endAsync(true).catch(() => undefined);
    for (const [id, p] of this.pending) {
      clearTimeout(p.timer);
      this.pending.delete(id);
      p.reject(new DynsecError(p.command, 'disconnected'));
    }
  }
}
