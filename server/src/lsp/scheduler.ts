/**
 * Diagnostics scheduling per document: a fast pass (syntax, semantics and cached engine findings) is
 * published at once on every change; the slow pass (the engine) starts after a debounce and is abandoned
 * between losses as soon as a newer version arrives. Whatever pass publishes, it publishes for the
 * version it analysed, and only while that version is still the latest — so the last diagnostics
 * always belong to the last text.
 */
import type { Issue } from "../issue.js";
import { makeIssue } from "../issue.js";
import type { DocumentAnalysis } from "../pipeline/stages.js";
import type { LanguageService } from "../service/language-service.js";
import { DEFAULT_SETTINGS } from "../settings.js";


export interface SchedulerHooks {
  publish(uri: string, version: number, issues: Issue[], pass: "fast" | "full"): void;
  /** Called after a full analysis of the latest version was published. */
  analysed?(uri: string, version: number, doc: DocumentAnalysis): void;
  log(message: string): void;
}

interface DocState {
  version: number;
  text: string;
  timer: ReturnType<typeof setTimeout> | null;
  running: boolean;
  /** Set when a change arrives while a slow pass is running, so it reruns afterwards. */
  rerun: boolean;
}

/** Schedules the two diagnostic passes of every open document (see the file comment). */
export class DiagnosticsScheduler {
  private readonly docs = new Map<string, DocState>();

  constructor(
    private readonly service: LanguageService,
    private readonly hooks: SchedulerHooks,
    private readonly debounceMs = DEFAULT_SETTINGS.debounceMs,
  ) {}

  /** A document was opened or changed: fast pass now, slow pass after the debounce. */
  update(uri: string, version: number, text: string): void {
    let st = this.docs.get(uri);
    if (!st) {
      st = { version, text, timer: null, running: false, rerun: false };
      this.docs.set(uri, st);
    }
    st.version = version;
    st.text = text;
    if (st.timer) clearTimeout(st.timer);
    st.timer = null;
    let fast: DocumentAnalysis | null = null;
    try {
      fast = this.service.analyseFast(text);
      this.hooks.publish(uri, version, fast.issues, "fast");
    } catch (err) {
      this.hooks.log(`fast check of ${uri} failed: ${String(err)}`);
      this.hooks.publish(uri, version, [internalError(text, err)], "fast");
    }
    if (st.running) {
      st.rerun = true;
      return;
    }
    st.timer = setTimeout(() => void this.runSlow(uri), this.debounceMs);
  }

  close(uri: string): void {
    const st = this.docs.get(uri);
    if (st?.timer) clearTimeout(st.timer);
    this.docs.delete(uri);
  }

  /** The version the scheduler last saw for a document (undefined when closed). */
  versionOf(uri: string): number | undefined {
    return this.docs.get(uri)?.version;
  }

  private async runSlow(uri: string): Promise<void> {
    const st = this.docs.get(uri);
    if (!st) return;
    st.timer = null;
    st.running = true;
    st.rerun = false;
    const { version, text } = st;
    const stale = () => this.docs.get(uri) !== st || st.version !== version;
    try {
      const doc = await this.service.analyseIncrementally(text, stale, yieldToEventLoop);
      if (doc && !stale()) {
        this.hooks.publish(uri, version, doc.issues, "full");
        this.hooks.analysed?.(uri, version, doc);
      }
    } catch (err) {
      this.hooks.log(`analysis of ${uri} failed: ${String(err)}`);
      if (!stale()) this.hooks.publish(uri, version, [internalError(text, err)], "full");
    } finally {
      st.running = false;
    }
    if (this.docs.get(uri) === st && (st.rerun || st.version !== version)) {
      st.timer = setTimeout(() => void this.runSlow(uri), this.debounceMs);
    }
  }
}

/** Lets queued messages (a newer didChange) be read between losses. */
function yieldToEventLoop(): Promise<void> {
  return new Promise((resolve) => setImmediate(resolve));
}

function internalError(text: string, err: unknown): Issue {
  return makeIssue("internal-error", `internal error while checking the document: ${String(err)}`, { start: 0, end: Math.min(1, text.length) });
}
