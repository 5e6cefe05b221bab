/**
 * Queued runs of this server: one FIFO per client and the round-robin ring of clients that have queued runs, so one
 * client's backlog never holds back another client's first run. Also what each client has in flight (queued or
 * running), for the bounds checked before a run is queued.
 */
export interface Queued {
  id: string;
  client: string;
  /** Cells × realizations. */
  work: number;
}

export class FairQueue<J extends Queued> {
  private readonly queues = new Map<string, J[]>();
  private order: string[] = [];
  private readonly runsOf = new Map<string, number>();
  private readonly workOf = new Map<string, number>();
  /** Cells × realizations queued or running in all. */
  workTotal = 0;

  /** Queued jobs in start order (round-robin across clients). */
  inOrder(): J[] {
    const qs = this.order.map((c) => this.queues.get(c) ?? []);
    const out: J[] = [];
    for (let round = 0; ; round++) {
      let any = false;
      for (const q of qs) {
        if (round < q.length) {
          out.push(q[round]);
          any = true;
        }
      }
      if (!any) return out;
    }
  }

  get size(): number {
    let n = 0;
    for (const q of this.queues.values()) n += q.length;
    return n;
  }

  /** Runs and work the client has queued or running. */
  inFlight(client: string): { runs: number; work: number } {
    return { runs: this.runsOf.get(client) ?? 0, work: this.workOf.get(client) ?? 0 };
  }

  /** Counts a job against its client's and the total bounds (before its record is written). */
  reserve(job: J): void {
    const f = this.inFlight(job.client);
    this.runsOf.set(job.client, f.runs + 1);
    this.workOf.set(job.client, f.work + job.work);
    this.workTotal += job.work;
  }

  /** Gives back a job's share of the bounds. */
  release(job: J): void {
    const f = this.inFlight(job.client);
    if (f.runs > 1) this.runsOf.set(job.client, f.runs - 1);
    else this.runsOf.delete(job.client);
    if (f.work - job.work > 0) this.workOf.set(job.client, f.work - job.work);
    else this.workOf.delete(job.client);
    this.workTotal = Math.max(0, this.workTotal - job.work);
  }

  push(job: J): void {
    const q = this.queues.get(job.client);
    if (q) q.push(job);
    else {
      this.queues.set(job.client, [job]);
      this.order.push(job.client);
    }
  }

  /** Takes the queued job `id` out of the queue; null when it is not queued. */
  remove(id: string): J | null {
    const job = this.inOrder().find((j) => j.id === id);
    if (!job) return null;
    const q = this.queues.get(job.client)!;
    q.splice(q.indexOf(job), 1);
    if (q.length === 0) {
      this.queues.delete(job.client);
      this.order = this.order.filter((c) => c !== job.client);
    }
    return job;
  }

  /** The next job to start: the client at the head of the ring gives its oldest and goes to the back of the ring. */
  next(): J | null {
    const client = this.order.shift();
    if (client === undefined) return null;
    const q = this.queues.get(client)!;
    const job = q.shift()!;
    if (q.length > 0) this.order.push(client);
    else this.queues.delete(client);
    return job;
  }
}
