// Diagnostics of one document: a check's verdict on the forward's name (mismatch and error as
// errors, inconclusive as a warning) with related information pointing at the backward and the
// `@sample` tag; annotation mistakes on the tag itself; why nothing ran when nothing may run.

import { pathToFileURL } from 'node:url';
import { DiagnosticSeverity, type Diagnostic, type DiagnosticRelatedInformation } from 'vscode-languageserver';
import type { OpDescriptor, OpResult } from '../model/types';
import { UNREACHED_CODE, unreachedDiagnostics } from './coverageMarks';
import type { DocumentFacts } from './documentFacts';
import { worstParam } from '../present/format';
import { opNameRange, problemRange, toRange, verdictSentence } from './format';
import { opStanding } from './opStanding';
import { fixData } from './problemFixes';

/** The `source` of every diagnostic we publish. */
export const DIAGNOSTIC_SOURCE = 'gradient-probe';

/** One code per kind, so users can filter and the tests can tell them apart. */
export const DiagnosticCodes = {
  mismatch: 'gradient-mismatch',
  inconclusive: 'gradient-inconclusive',
  error: 'check-failed',
  annotation: 'annotation',
  untrusted: 'untrusted-workspace',
  config: 'project-config',
  unreached: UNREACHED_CODE,
} as const;

export function diagnosticsFor(facts: DocumentFacts): Diagnostic[] {
  const { snapshot } = facts;
  const out: Diagnostic[] = [];
  for (const op of snapshot.ops) {
    const standing = opStanding(op, facts);
    // Annotation mistakes are known without running anything, so they show even untrusted.
    if (!standing.may && standing.code === 'annotation-error') {
      for (const problem of op.problems) {
        out.push({
          range: problemRange(problem, snapshot.lines),
          severity: DiagnosticSeverity.Error,
          source: DIAGNOSTIC_SOURCE,
          code: DiagnosticCodes.annotation,
          message: `${op.forward}: ${problem.message}`,
          ...fixData(problem),
        });
      }
      continue;
    }
    const range = opNameRange(op, snapshot.lines);
    if (!standing.may && standing.code === 'config-error' && facts.configError) {
      const related: DiagnosticRelatedInformation[] = facts.configError.file
        ? [{ location: { uri: pathToFileURL(facts.configError.file).toString(), range: zeroRange() }, message: 'the project configuration file' }]
        : [];
      out.push({
        range,
        severity: DiagnosticSeverity.Error,
        source: DIAGNOSTIC_SOURCE,
        code: DiagnosticCodes.config,
        message: `${op.forward} not checked: ${standing.reason}`,
        relatedInformation: related,
      });
      continue;
    }
    if (!standing.may) {
      out.push({
        range,
        severity: DiagnosticSeverity.Information,
        source: DIAGNOSTIC_SOURCE,
        code: DiagnosticCodes.untrusted,
        message: `${op.forward} not checked: ${standing.reason}. Trust the folder to check it.`,
      });
      continue;
    }
    const result = facts.latest(op.forward);
    if (!result) continue;
    if (facts.showUnreached !== false) out.push(...unreachedDiagnostics(result, snapshot.fsPath, DIAGNOSTIC_SOURCE));
    if (result.verdict === 'pass') continue;
    out.push(resultDiagnostic(op, result, facts));
  }
  return out;
}

function resultDiagnostic(op: OpDescriptor, result: OpResult, facts: DocumentFacts): Diagnostic {
  const { snapshot } = facts;
  const severity = result.verdict === 'inconclusive' ? DiagnosticSeverity.Warning : DiagnosticSeverity.Error;
  const code = DiagnosticCodes[result.verdict === 'pass' ? 'mismatch' : result.verdict];
  const related: DiagnosticRelatedInformation[] = [];
  if (op.backwardLocation) {
    const loc = op.backwardLocation;
    const lines = loc.file === snapshot.fsPath ? snapshot.lines : [];
    related.push({
      location: { uri: loc.file === snapshot.fsPath ? snapshot.uri : pathToFileURL(loc.file).toString(), range: toRange(loc, undefined, lines) },
      message: op.kind !== undefined && op.kind !== 'backward' ? `${op.kind} ${op.backward}: the hand-written derivative` : `backward ${op.backward}: the hand-written gradient`,
    });
  }
  if (result.thrownAt) {
    // Where the op's own code threw (the bundle's stack mapped to the user's source).
    const at = result.thrownAt;
    const here = at.file === snapshot.fsPath;
    related.push({
      location: { uri: here ? snapshot.uri : pathToFileURL(at.file).toString(), range: toRange(at, undefined, here ? snapshot.lines : []) },
      message: 'thrown here',
    });
  }
  const param = worstParam(result);
  const sampleTag = param ? op.tags.find((t) => t.tag === 'sample' && t.param === param.name) : undefined;
  if (sampleTag) {
    related.push({
      location: { uri: snapshot.uri, range: toRange(sampleTag, { line: sampleTag.endLine, column: sampleTag.endColumn }, snapshot.lines) },
      message: `how ${param!.name} is drawn (seed ${result.seed})`,
    });
  }
  return {
    range: opNameRange(op, snapshot.lines),
    severity,
    source: DIAGNOSTIC_SOURCE,
    code,
    message: `${op.forward}: ${verdictSentence(result)}${result.isolation === 'interpreter' ? ' [isolated interpreter]' : ''}`,
    ...(related.length > 0 ? { relatedInformation: related } : {}),
  };
}

function zeroRange(): Diagnostic['range'] {
  return { start: { line: 0, character: 0 }, end: { line: 0, character: 0 } };
}
