/**
 * `npm run --silent analyze -- [options] FILE...`: analyses the given efforts as one
 * session and prints one JSON object on stdout, in the documented shape of the analysis command.
 * Each FILE is an effort CSV, or there is one session file: a Tidemark session JSON,
 * a FHIR R4 Bundle, or a .zip of effort CSVs with an optional session.json.
 *
 * Options: --age Y --height-cm H --sex female|male [--ethnicity E] [--equations ID]
 * [--reference-dir DIR] [--protocol ID]. Predicted values need age, height and sex
 * (from the options or the session's metadata; options win). Without --equations the
 * command uses GLI Global 2022 when the reference folder (--reference-dir, else
 * TIDEMARK_REFERENCE_DIR) holds its workbook, else the built-in ECSC/ERS 1993 set;
 * the set used is named in `session.predicted.equations`. Age alone selects the
 * young-child grade rules. Numbers are printed unrounded.
 * Errors: one line on stderr, nothing on stdout, exit code 1 (bad input) or 2 (bad
 * command line).
 */
import { readFileSync, statSync } from 'node:fs';
import path from 'node:path';
import { parseArgs } from 'node:util';
import { callerWorkingDirectory, loadConfig } from '../config.js';
import { ProtocolCatalogueError, loadProtocol } from '../protocols/protocol-catalogue.js';
import type { Demographics, Ethnicity, EquationsId, PredictedValue, Recording } from '../../shared/spirometry/model.js';
import { SpirometryInputError } from '../../shared/spirometry/model.js';
import type { ResolvedProtocol } from '../../shared/spirometry/protocol.js';
import type { ReferenceEquations } from '../../shared/spirometry/reference/reference-equations.js';
import { analyzeSession, type SessionAnalysis } from '../../shared/spirometry/session-analysis.js';
import { type DecodeLimits, decodeEffortCsvFiles, decodeSessionFile, demographicsAtTest } from '../uploads/session-file-decoder.js';

/** A command-line mistake: exit code 2. */
class UsageError extends Error {}

/** Largest input file read (bytes); more is certainly not one session. */
const MAX_FILE_BYTES = 200 * 1024 * 1024;
/** Most entries a session zip may list: a session has a handful of efforts (common practice bound). */
const MAX_ZIP_ENTRIES = 1000;
/**
 * Largest expanded/stored ratio of a zip entry over 1 MB: effort CSVs deflate far less,
 * zip bombs far more (common practice: effort CSVs deflate 4-5 times).
 */
const MAX_COMPRESSION_RATIO = 100;

const ETHNICITIES: readonly Ethnicity[] = ['caucasian', 'african-american', 'north-east-asian', 'south-east-asian', 'other', 'mexican-american'];
const EQUATIONS: readonly EquationsId[] = ['gli-global-2022', 'gli-2012', 'nhanes3', 'ecsc-1993'];

interface Inputs {
  readonly recordings: Recording[];
  /** Demographics the session file carries, overridden by the command line. */
  readonly demographics: Partial<Demographics>;
}

function readInputFile(file: string): Buffer {
  const resolved = path.resolve(callerWorkingDirectory(), file);
  let size: number;
  try {
    size = statSync(resolved).size;
  } catch {
    throw new SpirometryInputError('file-missing', `${file}: no such file`, { file });
  }
  if (size > MAX_FILE_BYTES) {
    throw new SpirometryInputError('file-too-large', `${file}: ${size} bytes is more than the ${MAX_FILE_BYTES} accepted`, { file });
  }
  return readFileSync(resolved);
}

/** Bounds on a session file: the file limit again for what a zip expands to. */
function decodeLimits(protocol: ResolvedProtocol): DecodeLimits {
  return {
    maxExpandedBytes: MAX_FILE_BYTES,
    maxEntries: MAX_ZIP_ENTRIES,
    maxCompressionRatio: MAX_COMPRESSION_RATIO,
    minSampleRateHz: protocol.engine.minSampleRateHz,
  };
}

function readInputs(files: readonly string[], protocol: ResolvedProtocol): Inputs {
  const sessionFiles = files.filter((file) => /\.(json|zip)$/i.test(file));
  if (sessionFiles.length > 0 && files.length > 1) {
    throw new UsageError(`give either effort CSVs or one session file, not both (${sessionFiles[0]})`);
  }
  const limits = decodeLimits(protocol);
  if (sessionFiles.length === 1) {
    const file = sessionFiles[0];
    const decoded = decodeSessionFile(path.basename(file), readInputFile(file), limits);
    return { recordings: decoded.recordings, demographics: demographicsAtTest(decoded.metadata) };
  }
  const csvFiles = files.map((file) => ({ name: path.basename(file), bytes: readInputFile(file) }));
  return { recordings: decodeEffortCsvFiles(csvFiles, limits).recordings, demographics: {} };
}

function positiveNumber(value: string | undefined, option: string): number | undefined {
  if (value === undefined) return undefined;
  const parsed = Number(value);
  if (value.trim() === '' || !Number.isFinite(parsed) || parsed <= 0) throw new UsageError(`${option} must be a positive number, not "${value}"`);
  return parsed;
}

interface Options {
  readonly files: string[];
  readonly demographics: Partial<Demographics>;
  readonly equations?: EquationsId;
  readonly protocolId?: string;
  readonly referenceDir?: string;
}

function parseCommandLine(argv: string[]): Options {
  let parsed;
  try {
    parsed = parseArgs({
      args: argv,
      allowPositionals: true,
      strict: true,
      options: {
        age: { type: 'string' },
        'height-cm': { type: 'string' },
        sex: { type: 'string' },
        ethnicity: { type: 'string' },
        equations: { type: 'string' },
        protocol: { type: 'string' },
        'reference-dir': { type: 'string' },
      },
    });
  } catch (error) {
    throw new UsageError((error as Error).message);
  }
  const { values, positionals } = parsed;
  if (positionals.length === 0) {
    throw new UsageError('no input: give effort CSV files or one session file (.json or .zip)');
  }
  const demographics: { -readonly [K in keyof Demographics]?: Demographics[K] } = {};
  const ageYears = positiveNumber(values.age, '--age');
  if (ageYears !== undefined) demographics.ageYears = ageYears;
  const heightCm = positiveNumber(values['height-cm'], '--height-cm');
  if (heightCm !== undefined) demographics.heightCm = heightCm;
  if (values.sex !== undefined) {
    if (values.sex !== 'female' && values.sex !== 'male') throw new UsageError(`--sex must be female or male, not "${values.sex}"`);
    demographics.sex = values.sex;
  }
  if (values.ethnicity !== undefined) {
    if (!(ETHNICITIES as readonly string[]).includes(values.ethnicity)) {
      throw new UsageError(`--ethnicity must be one of ${ETHNICITIES.join(', ')}, not "${values.ethnicity}"`);
    }
    demographics.ethnicity = values.ethnicity as Ethnicity;
  }
  if (values.equations !== undefined && !(EQUATIONS as readonly string[]).includes(values.equations)) {
    throw new UsageError(`--equations must be one of ${EQUATIONS.join(', ')}, not "${values.equations}"`);
  }
  return {
    files: positionals,
    demographics,
    equations: values.equations as EquationsId | undefined,
    protocolId: values.protocol,
    referenceDir: values['reference-dir'],
  };
}

/**
 * The equations to use: the named set, else GLI Global 2022 when the reference
 * folder holds its workbook, else the built-in ECSC/ERS 1993 set.
 */
function resolveReferenceDir(dir: string | undefined): string | undefined {
  return dir === undefined ? undefined : path.resolve(callerWorkingDirectory(), dir);
}

async function chooseEquations(options: Options, referenceDir: string | undefined): Promise<ReferenceEquations> {
  const { loadReferenceEquations, REFERENCE_FILES } = await import('../reference-sets/reference-loader.js');
  let id = options.equations;
  if (id === undefined) {
    const hasGliGlobal =
      referenceDir !== undefined &&
      REFERENCE_FILES['gli-global-2022'].every((relative) => {
        try {
          return statSync(path.join(referenceDir, relative)).isFile();
        } catch {
          return false;
        }
      });
    id = hasGliGlobal ? 'gli-global-2022' : 'ecsc-1993';
  }
  if (REFERENCE_FILES[id].length > 0 && referenceDir === undefined) {
    throw new UsageError(`the ${id} equations need a reference folder: --reference-dir DIR or TIDEMARK_REFERENCE_DIR`);
  }
  return loadReferenceEquations(id, referenceDir ?? '');
}

function predictedJson(value: PredictedValue | undefined): Record<string, unknown> | null {
  if (!value) return null;
  return {
    predicted: value.predicted,
    lln: value.lln,
    uln: value.uln,
    z: value.z,
    percentPredicted: value.percentPredicted,
    ...(value.reason ? { reason: value.reason } : {}),
  };
}

/** The documented output object, with extra keys for the reader. */
function toOutput(analysis: SessionAnalysis, demographics: Partial<Demographics>): unknown {
  const efforts = analysis.efforts.map((effort) => {
    const m = effort.metrics;
    return {
      file: effort.label,
      timeZero: m.timeZeroS,
      bev: m.bevL,
      fev1: m.fev1L,
      fvc: m.fvcL,
      fev6: m.fev6L,
      pef: m.pefLPerS,
      fef2575: m.fef2575LPerS,
      fet: m.fetS,
      eofe: m.endOfTest.met,
      fev1Verdict: effort.verdicts.fev1.verdict,
      fvcVerdict: effort.verdicts.fvc.verdict,
      findings: effort.findings.map((finding) => finding.code),
      fev075: m.fev075L,
      fef25: m.fef25LPerS,
      fef50: m.fef50LPerS,
      fef75: m.fef75LPerS,
      fivc: m.fivcL,
      hesitationTime: m.hesitationTimeS,
      timeToPef: m.timeToPefS,
      endOfTest: m.endOfTest,
      ...(effort.verdicts.fev075 ? { fev075Verdict: effort.verdicts.fev075.verdict } : {}),
      verdictReasons: {
        fev1: effort.verdicts.fev1.failures.map((failure) => failure.message),
        fvc: effort.verdicts.fvc.failures.map((failure) => failure.message),
      },
      findingDetails: effort.findings,
    };
  });
  const { reported, predicted } = analysis;
  return {
    efforts,
    session: {
      fev1Grade: analysis.fev1.grade,
      fvcGrade: analysis.fvc.grade,
      fev1: reported.fev1?.valueL ?? null,
      fvc: reported.fvc?.valueL ?? null,
      fev1FvcRatio: reported.fev1FvcRatio,
      predicted: predicted
        ? {
            equations: predicted.equationsId,
            fev1: predictedJson(predicted.fev1),
            fvc: predictedJson(predicted.fvc),
            fev1FvcRatio: predictedJson(predicted.fev1Fvc),
            ...(predicted.fef2575 ? { fef2575: predictedJson(predicted.fef2575) } : {}),
            ...(predicted.pef ? { pef: predictedJson(predicted.pef) } : {}),
            ...(predicted.fev6 ? { fev6: predictedJson(predicted.fev6) } : {}),
          }
        : null,
      fev1Effort: reported.fev1?.effortIndex ?? null,
      fvcEffort: reported.fvc?.effortIndex ?? null,
      bestEffort: reported.bestEffortIndex,
      pef: reported.pefLPerS,
      fef2575: reported.fef2575LPerS,
      fev1RepeatabilityMl: analysis.fev1.differenceMl,
      fvcRepeatabilityMl: analysis.fvc.differenceMl,
      acceptableFev1Count: analysis.fev1.acceptableCount,
      acceptableFvcCount: analysis.fvc.acceptableCount,
      ...(analysis.fev075 ? { fev075Grade: analysis.fev075.grade, fev075: analysis.reportedFev075L } : {}),
      endpointEligible: analysis.endpoint,
      notes: analysis.notes,
      protocol: analysis.protocol,
      demographics: Object.keys(demographics).length > 0 ? demographics : null,
    },
  };
}

async function run(argv: string[]): Promise<string> {
  const options = parseCommandLine(argv);
  const protocol = loadProtocol(options.protocolId);
  const inputs = readInputs(options.files, protocol);
  const demographics = { ...inputs.demographics, ...options.demographics };
  const complete = demographics.ageYears !== undefined && demographics.heightCm !== undefined && demographics.sex !== undefined;
  const asked = options.demographics;
  const partial = asked.heightCm !== undefined || asked.sex !== undefined || options.equations !== undefined;
  if (!complete && partial) {
    throw new UsageError('predicted values need --age, --height-cm and --sex together');
  }
  const equations = complete ? await chooseEquations(options, resolveReferenceDir(options.referenceDir ?? loadConfig().referenceDir)) : undefined;
  const analysis = analyzeSession(inputs.recordings, protocol, { demographics, equations });
  return JSON.stringify(toOutput(analysis, demographics));
}

function oneLine(message: string): string {
  return message.replace(/\s*\n\s*/g, ' ').trim();
}

run(process.argv.slice(2)).then(
  (json) => {
    process.stdout.write(json + '\n');
  },
  (error: unknown) => {
    if (error instanceof UsageError) {
      process.stderr.write(`analyze: ${oneLine(error.message)}\n`);
      process.exitCode = 2;
    } else if (error instanceof SpirometryInputError || error instanceof ProtocolCatalogueError) {
      process.stderr.write(`analyze: ${oneLine(error.message)}\n`);
      process.exitCode = 1;
    } else {
      // Unexpected: still one line, so that scripts reading stderr are not flooded.
      process.stderr.write(`analyze: internal error: ${oneLine(error instanceof Error ? error.message : String(error))}\n`);
      process.exitCode = 1;
    }
  },
);
