// The extension's output channel, which also keeps its last lines in memory so that a failing
// in-editor test (or a bug report) can show what the client and server logged.

import type * as vscode from 'vscode';

/** Lines kept: enough for the last few checks' log, small enough to never matter. */
const KEPT_LINES = 300;

export class RecordingOutputChannel implements vscode.OutputChannel {
  private readonly lines: string[] = [];
  private partial = '';

  constructor(private readonly channel: vscode.OutputChannel) {}

  get name(): string {
    return this.channel.name;
  }

  append(value: string): void {
    this.channel.append(value);
    this.record(value);
  }

  appendLine(value: string): void {
    this.channel.appendLine(value);
    this.record(`${value}\n`);
  }

  replace(value: string): void {
    this.channel.replace(value);
    this.lines.length = 0;
    this.partial = '';
    this.record(value);
  }

  clear(): void {
    this.channel.clear();
    this.lines.length = 0;
    this.partial = '';
  }

  show(columnOrPreserve?: vscode.ViewColumn | boolean, preserveFocus?: boolean): void {
    if (typeof columnOrPreserve === 'boolean' || columnOrPreserve === undefined) this.channel.show(columnOrPreserve);
    else this.channel.show(columnOrPreserve, preserveFocus);
  }

  hide(): void {
    this.channel.hide();
  }

  dispose(): void {
    this.channel.dispose();
  }

  tail(): string[] {
    return this.partial ? [...this.lines, this.partial] : [...this.lines];
  }

  private record(text: string): void {
    const parts = (this.partial + text).split('\n');
    this.partial = parts.pop() ?? '';
    this.lines.push(...parts);
    if (this.lines.length > KEPT_LINES) this.lines.splice(0, this.lines.length - KEPT_LINES);
  }
}
