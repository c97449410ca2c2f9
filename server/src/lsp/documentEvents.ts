// When checks start on their own: on open and save, and after typing pauses when the
// `checkWhen` setting asks for it. A newer edit cancels the run of the older text.

import type { TextDocumentChangeEvent } from 'vscode-languageserver';
import type { TextDocument } from 'vscode-languageserver-textdocument';
import { CheckRefused } from './checkService';
import type { Session } from './session';

export class DocumentEvents {
  private readonly versions = new Map<string, number>();
  private readonly typingTimers = new Map<string, NodeJS.Timeout>();

  constructor(private readonly session: Session) {}

  async opened(e: TextDocumentChangeEvent<TextDocument>): Promise<void> {
    const key = this.session.keyOf(e.document.uri);
    this.versions.set(key, e.document.version);
    this.session.changed(key);
    if ((await this.session.effectiveSettings(key)).checkWhen !== 'on-command') this.runQuietly(key);
  }

  async edited(e: TextDocumentChangeEvent<TextDocument>): Promise<void> {
    const key = this.session.keyOf(e.document.uri);
    // The library reports the opening as a change too; only a new version is an edit.
    if (this.versions.get(key) === e.document.version) return;
    this.versions.set(key, e.document.version);
    this.session.checks.cancel(key);
    this.session.changed(key);
    const settings = await this.session.effectiveSettings(key);
    if (settings.checkWhen !== 'while-typing') return;
    clearTimeout(this.typingTimers.get(key));
    this.typingTimers.set(
      key,
      setTimeout(() => {
        this.typingTimers.delete(key);
        this.runQuietly(key);
      }, settings.typingPauseMs),
    );
  }

  async saved(e: TextDocumentChangeEvent<TextDocument>): Promise<void> {
    const key = this.session.keyOf(e.document.uri);
    if ((await this.session.effectiveSettings(key)).checkWhen !== 'on-command') this.runQuietly(key);
    await this.fileChanged(key);
  }

  /**
   * A file changed on disk (saved here, or by another program): every document whose last
   * bundle read it is re-checked, since its results no longer describe the code that runs.
   */
  async fileChanged(fsPath: string): Promise<void> {
    for (const dependent of this.session.checks.dependentsOf(fsPath)) {
      this.session.changed(dependent);
      if ((await this.session.effectiveSettings(dependent)).checkWhen === 'on-command') continue;
      this.session.log(`re-check ${dependent}: ${fsPath} changed, and its bundle includes it`);
      this.runQuietly(dependent);
    }
  }

  /** Whether a document is open here (its saves arrive as save events). */
  isOpen(fsPath: string): boolean {
    return this.versions.has(fsPath);
  }

  closed(e: TextDocumentChangeEvent<TextDocument>): void {
    const key = this.session.keyOf(e.document.uri);
    this.versions.delete(key);
    clearTimeout(this.typingTimers.get(key));
    this.typingTimers.delete(key);
    // Unsaved edits are gone: what is shown now must describe the file on disk.
    this.session.checks.cancel(key);
    this.session.changed(key);
  }

  dispose(): void {
    for (const timer of this.typingTimers.values()) clearTimeout(timer);
    this.typingTimers.clear();
  }

  /** A check nobody awaits: refusals are already shown as diagnostics, failures go to the log. */
  private runQuietly(key: string): void {
    this.session.check(key).catch((err: unknown) => {
      if (!(err instanceof CheckRefused)) this.session.log(`check failed: ${err instanceof Error ? (err.stack ?? err.message) : String(err)}`);
    });
  }
}
