/**
 * Source FMU for Model Exchange following "Functional Mock-up Interface for Model Exchange and
 * Co-Simulation, version 2.0" (Modelica Association, 2014), for continuous sheets without input delays:
 *   modelDescription.xml   at the archive root (Sec. 2.3 "FMU Distribution"; schema Sec. 2.2)
 *   sources/<id>.c, .h     the model functions (the C99 export)
 *   sources/<id>_fmi2.c    the FMI functions (Sec. 2.1 common functions, Sec. 3.2 Model Exchange)
 *   documentation/index.html  model version, parameter provenance and caution
 * The importer supplies the standard's fmi2Functions.h when it compiles the sources (Sec. 2.1.1). The
 * functions are written without prefix; the standard header renames them when FMI2_FUNCTION_PREFIX is
 * defined. Variables are exposed in the sheet's declared units, time in the sheet's time unit.
 * Value references: states 0…nx−1, their derivatives nx…2nx−1, parameters, inputs, outputs after.
 * Parameter start values are the values exported (the fit's, where the caller applied a fit).
 */
import type { CompiledModel } from '../sheet/compiled'
import { toDeclared } from '../sheet/compiled'
import type { ParsedModel } from '../sheet/model'
import { hashText } from '../sheet/hash'
import { AnalysisInputError } from '../engine/linear/errors'
import { exportC } from './c99'
import { blockComment, metaLines, refuseEvents, type ExportMeta } from './meta'
import { zipStore } from './zip'

const xml = (s: string) => s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;')
/** a real as the XML schema's xs:double reads it back exactly */
const xd = (v: number) => (Number.isFinite(v) ? String(v) : v > 0 ? 'INF' : v < 0 ? '-INF' : 'NaN')

export interface FmuVariable {
  name: string
  valueReference: number
  causality: 'local' | 'parameter' | 'input' | 'output'
  variability: 'continuous' | 'fixed'
  initial: 'exact' | 'calculated' | null
  unit: string
  start: number | null
  /** 1-based index of the state a derivative belongs to */
  derivative: number | null
  description: string
}

export function fmuVariables(model: CompiledModel, p: Float64Array, x0: Float64Array): FmuVariable[] {
  const { nx, np, nu } = model
  const tu = model.timeUnit
  const vars: FmuVariable[] = []
  model.states.forEach((s, i) => vars.push({ name: s.name, valueReference: i, causality: 'local', variability: 'continuous', initial: 'exact', unit: s.unit, start: toDeclared(s, x0[i]), derivative: null, description: s.description }))
  model.states.forEach((s, i) => vars.push({ name: `der(${s.name})`, valueReference: nx + i, causality: 'local', variability: 'continuous', initial: 'calculated', unit: s.unit ? `${s.unit}/${tu}` : '', start: null, derivative: i + 1, description: `time derivative of ${s.name}` }))
  model.params.forEach((s, j) => vars.push({ name: s.name, valueReference: 2 * nx + j, causality: 'parameter', variability: 'fixed', initial: 'exact', unit: s.unit, start: toDeclared(s, p[j]), derivative: null, description: s.description }))
  model.inputs.forEach((s, j) => vars.push({ name: s.name, valueReference: 2 * nx + np + j, causality: 'input', variability: 'continuous', initial: null, unit: s.unit, start: toDeclared(s, s.value), derivative: null, description: s.description }))
  model.outputs.forEach((s, j) => vars.push({ name: s.name, valueReference: 2 * nx + np + nu + j, causality: 'output', variability: 'continuous', initial: 'calculated', unit: s.unit, start: null, derivative: null, description: s.description }))
  return vars
}

export function fmuGuid(model: CompiledModel, meta: ExportMeta, p: Float64Array): string {
  const s = `${model.hash}|${meta.modelVersion}|${meta.provenance}|${Array.from(p).join(',')}`
  const h = hashText(s) + hashText(`${s}#2`)
  return `{${h.slice(0, 8)}-${h.slice(8, 12)}-${h.slice(12, 16)}-${h.slice(16, 20)}-${h.slice(20, 32)}}`
}

export function modelDescription(model: CompiledModel, meta: ExportMeta, id: string, guid: string, vars: FmuVariable[], sources: string[]): string {
  const units = [...new Set(vars.map((v) => v.unit).filter((u) => u !== ''))]
  const idx = (pred: (v: FmuVariable) => boolean) => vars.map((v, i) => (pred(v) ? i + 1 : 0)).filter((i) => i > 0)
  const outputs = idx((v) => v.causality === 'output')
  const derivatives = idx((v) => v.derivative !== null)
  const sv = (v: FmuVariable) => {
    const attrs = [`name="${xml(v.name)}"`, `valueReference="${v.valueReference}"`]
    if (v.description) attrs.push(`description="${xml(v.description)}"`)
    attrs.push(`causality="${v.causality}"`, `variability="${v.variability}"`)
    if (v.initial) attrs.push(`initial="${v.initial}"`)
    const real = [v.unit ? `unit="${xml(v.unit)}"` : '', v.start !== null ? `start="${xd(v.start)}"` : '', v.derivative !== null ? `derivative="${v.derivative}"` : ''].filter(Boolean).join(' ')
    return `    <ScalarVariable ${attrs.join(' ')}>\n      <Real${real ? ` ${real}` : ''}/>\n    </ScalarVariable>`
  }
  const unknowns = (list: number[]) => list.map((i) => `      <Unknown index="${i}"/>`).join('\n')
  return [
    '<?xml version="1.0" encoding="UTF-8"?>',
    `<!--\n${metaLines(meta).map((l) => `  ${xml(l).replace(/--/g, '- -')}`).join('\n')}\n-->`,
    `<fmiModelDescription fmiVersion="2.0" modelName="${xml(model.title)}" guid="${guid}" description="${xml(`${meta.modelVersion}. Parameters: ${meta.provenance}. ${meta.caution}`)}" generationTool="${xml(meta.generator)}" version="${xml(meta.modelVersion)}" variableNamingConvention="structured" numberOfEventIndicators="0">`,
    `  <ModelExchange modelIdentifier="${id}" providesDirectionalDerivative="true" canGetAndSetFMUstate="false" canSerializeFMUstate="false">`,
    '    <SourceFiles>',
    ...sources.map((s) => `      <File name="${xml(s)}"/>`),
    '    </SourceFiles>',
    '  </ModelExchange>',
    ...(units.length ? ['  <UnitDefinitions>', ...units.map((u) => `    <Unit name="${xml(u)}"/>`), '  </UnitDefinitions>'] : []),
    '  <ModelVariables>',
    ...vars.map(sv),
    '  </ModelVariables>',
    '  <ModelStructure>',
    ...(outputs.length ? ['    <Outputs>', unknowns(outputs), '    </Outputs>'] : []),
    ...(derivatives.length ? ['    <Derivatives>', unknowns(derivatives), '    </Derivatives>'] : []),
    ...(outputs.length + derivatives.length ? ['    <InitialUnknowns>', unknowns([...outputs, ...derivatives].sort((a, b) => a - b)), '    </InitialUnknowns>'] : []),
    '  </ModelStructure>',
    '</fmiModelDescription>',
    '',
  ].join('\n')
}

function glue(model: CompiledModel, id: string, guid: string, meta: ExportMeta): string {
  const P = id.toUpperCase()
  const { nx, np, nu, ny } = model
  return `${blockComment([...metaLines(meta), '', 'FMI 2.0 Model Exchange functions (the importer supplies fmi2Functions.h).'])}
#include <stddef.h>
#include <string.h>
#include "fmi2Functions.h"
#include "${id}.h"

#define NXA (${P}_NX > 0 ? ${P}_NX : 1)
#define NPA (${P}_NP > 0 ? ${P}_NP : 1)
#define NUA (${P}_NU > 0 ? ${P}_NU : 1)
#define NYA (${P}_NY > 0 ? ${P}_NY : 1)
#define VR_DER ${nx}
#define VR_PAR ${2 * nx}
#define VR_IN ${2 * nx + np}
#define VR_OUT ${2 * nx + np + nu}
#define VR_END ${2 * nx + np + nu + ny}
#define GUID "${guid}"

typedef struct {
  fmi2Real time;
  double x[NXA], p[NPA], u[NUA], f[NXA], y[NYA];
  double fx[NXA * NXA], fu[NXA * NUA], gx[NYA * NXA], gu[NYA * NUA];
  /* FMI 2.0, Sec. 2.1.5: the importer keeps the callback struct valid until fmi2FreeInstance */
  const fmi2CallbackFunctions *cb;
  fmi2Boolean logging;
} Instance;

static void refresh(Instance *m) {
  ${id}_rhs(m->time, m->x, m->p, m->u, m->f);
  ${id}_outputs(m->time, m->x, m->p, m->u, m->y);
}

static void note(Instance *m, fmi2Status s, const char *msg) {
  if (m && m->cb->logger && (m->logging || s != fmi2OK)) m->cb->logger(m->cb->componentEnvironment, "${id}", s, "error", msg);
}

const char *fmi2GetTypesPlatform(void) { return "default"; }
const char *fmi2GetVersion(void) { return "2.0"; }

fmi2Status fmi2SetDebugLogging(fmi2Component c, fmi2Boolean loggingOn, size_t nCategories, const fmi2String categories[]) {
  (void)nCategories; (void)categories;
  if (!c) return fmi2Error;
  ((Instance *)c)->logging = loggingOn;
  return fmi2OK;
}

fmi2Component fmi2Instantiate(fmi2String instanceName, fmi2Type fmuType, fmi2String fmuGUID, fmi2String fmuResourceLocation,
                              const fmi2CallbackFunctions *functions, fmi2Boolean visible, fmi2Boolean loggingOn) {
  (void)instanceName; (void)fmuResourceLocation; (void)visible;
  if (!functions || !functions->allocateMemory || !functions->freeMemory) return NULL;
  if (fmuType != fmi2ModelExchange || !fmuGUID || strcmp(fmuGUID, GUID) != 0) {
    if (functions->logger) functions->logger(functions->componentEnvironment, instanceName, fmi2Error, "error", "${id}: wrong GUID or FMU type (this FMU is Model Exchange only)");
    return NULL;
  }
  Instance *m = (Instance *)functions->allocateMemory(1, sizeof(Instance));
  if (!m) return NULL;
  memset(m, 0, sizeof(Instance));
  m->cb = functions;
  m->logging = loggingOn;
  for (int i = 0; i < ${P}_NX; i++) m->x[i] = ${id}_initial_state[i];
  for (int i = 0; i < ${P}_NP; i++) m->p[i] = ${id}_parameters[i];
  for (int i = 0; i < ${P}_NU; i++) m->u[i] = ${id}_default_inputs[i];
  refresh(m);
  return m;
}

void fmi2FreeInstance(fmi2Component c) {
  Instance *m = (Instance *)c;
  if (m) m->cb->freeMemory(m);
}

fmi2Status fmi2SetupExperiment(fmi2Component c, fmi2Boolean toleranceDefined, fmi2Real tolerance, fmi2Real startTime, fmi2Boolean stopTimeDefined, fmi2Real stopTime) {
  (void)toleranceDefined; (void)tolerance; (void)stopTimeDefined; (void)stopTime;
  if (!c) return fmi2Error;
  ((Instance *)c)->time = startTime;
  return fmi2OK;
}
fmi2Status fmi2EnterInitializationMode(fmi2Component c) { return c ? fmi2OK : fmi2Error; }
fmi2Status fmi2ExitInitializationMode(fmi2Component c) { if (!c) return fmi2Error; refresh((Instance *)c); return fmi2OK; }
fmi2Status fmi2Terminate(fmi2Component c) { return c ? fmi2OK : fmi2Error; }
fmi2Status fmi2Reset(fmi2Component c) {
  Instance *m = (Instance *)c;
  if (!m) return fmi2Error;
  m->time = 0;
  for (int i = 0; i < ${P}_NX; i++) m->x[i] = ${id}_initial_state[i];
  for (int i = 0; i < ${P}_NP; i++) m->p[i] = ${id}_parameters[i];
  for (int i = 0; i < ${P}_NU; i++) m->u[i] = ${id}_default_inputs[i];
  refresh(m);
  return fmi2OK;
}

fmi2Status fmi2GetReal(fmi2Component c, const fmi2ValueReference vr[], size_t nvr, fmi2Real value[]) {
  Instance *m = (Instance *)c;
  if (!m) return fmi2Error;
  refresh(m);
  for (size_t k = 0; k < nvr; k++) {
    fmi2ValueReference r = vr[k];
    if (r < VR_DER) value[k] = (m->x[r] - ${id}_state_offset[r]) / ${id}_state_scale[r];
    else if (r < VR_PAR) value[k] = m->f[r - VR_DER] / ${id}_state_scale[r - VR_DER];
    else if (r < VR_IN) value[k] = (m->p[r - VR_PAR] - ${id}_parameter_offset[r - VR_PAR]) / ${id}_parameter_scale[r - VR_PAR];
    else if (r < VR_OUT) value[k] = (m->u[r - VR_IN] - ${id}_input_offset[r - VR_IN]) / ${id}_input_scale[r - VR_IN];
    else if (r < VR_END) value[k] = (m->y[r - VR_OUT] - ${id}_output_offset[r - VR_OUT]) / ${id}_output_scale[r - VR_OUT];
    else { note(m, fmi2Error, "fmi2GetReal: unknown value reference"); return fmi2Error; }
  }
  return fmi2OK;
}

fmi2Status fmi2SetReal(fmi2Component c, const fmi2ValueReference vr[], size_t nvr, const fmi2Real value[]) {
  Instance *m = (Instance *)c;
  if (!m) return fmi2Error;
  for (size_t k = 0; k < nvr; k++) {
    fmi2ValueReference r = vr[k];
    if (r < VR_DER) m->x[r] = value[k] * ${id}_state_scale[r] + ${id}_state_offset[r];
    else if (r >= VR_PAR && r < VR_IN) m->p[r - VR_PAR] = value[k] * ${id}_parameter_scale[r - VR_PAR] + ${id}_parameter_offset[r - VR_PAR];
    else if (r >= VR_IN && r < VR_OUT) m->u[r - VR_IN] = value[k] * ${id}_input_scale[r - VR_IN] + ${id}_input_offset[r - VR_IN];
    else { note(m, fmi2Error, "fmi2SetReal: the value reference is not a state, parameter or input"); return fmi2Error; }
  }
  return fmi2OK;
}

fmi2Status fmi2GetInteger(fmi2Component c, const fmi2ValueReference vr[], size_t nvr, fmi2Integer value[]) { (void)vr; (void)value; return c && nvr == 0 ? fmi2OK : fmi2Error; }
fmi2Status fmi2GetBoolean(fmi2Component c, const fmi2ValueReference vr[], size_t nvr, fmi2Boolean value[]) { (void)vr; (void)value; return c && nvr == 0 ? fmi2OK : fmi2Error; }
fmi2Status fmi2GetString(fmi2Component c, const fmi2ValueReference vr[], size_t nvr, fmi2String value[]) { (void)vr; (void)value; return c && nvr == 0 ? fmi2OK : fmi2Error; }
fmi2Status fmi2SetInteger(fmi2Component c, const fmi2ValueReference vr[], size_t nvr, const fmi2Integer value[]) { (void)vr; (void)value; return c && nvr == 0 ? fmi2OK : fmi2Error; }
fmi2Status fmi2SetBoolean(fmi2Component c, const fmi2ValueReference vr[], size_t nvr, const fmi2Boolean value[]) { (void)vr; (void)value; return c && nvr == 0 ? fmi2OK : fmi2Error; }
fmi2Status fmi2SetString(fmi2Component c, const fmi2ValueReference vr[], size_t nvr, const fmi2String value[]) { (void)vr; (void)value; return c && nvr == 0 ? fmi2OK : fmi2Error; }

fmi2Status fmi2GetFMUstate(fmi2Component c, fmi2FMUstate *s) { (void)c; (void)s; return fmi2Error; }
fmi2Status fmi2SetFMUstate(fmi2Component c, fmi2FMUstate s) { (void)c; (void)s; return fmi2Error; }
fmi2Status fmi2FreeFMUstate(fmi2Component c, fmi2FMUstate *s) { (void)c; (void)s; return fmi2Error; }
fmi2Status fmi2SerializedFMUstateSize(fmi2Component c, fmi2FMUstate s, size_t *n) { (void)c; (void)s; (void)n; return fmi2Error; }
fmi2Status fmi2SerializeFMUstate(fmi2Component c, fmi2FMUstate s, fmi2Byte b[], size_t n) { (void)c; (void)s; (void)b; (void)n; return fmi2Error; }
fmi2Status fmi2DeSerializeFMUstate(fmi2Component c, const fmi2Byte b[], size_t n, fmi2FMUstate *s) { (void)c; (void)b; (void)n; (void)s; return fmi2Error; }

/* exact partial derivatives of derivatives and outputs with respect to states and inputs (declared units) */
fmi2Status fmi2GetDirectionalDerivative(fmi2Component c, const fmi2ValueReference vUnknown_ref[], size_t nUnknown,
                                        const fmi2ValueReference vKnown_ref[], size_t nKnown, const fmi2Real dvKnown[], fmi2Real dvUnknown[]) {
  Instance *m = (Instance *)c;
  if (!m) return fmi2Error;
  ${id}_dfdx(m->time, m->x, m->p, m->u, m->fx);
  ${id}_dgdx(m->time, m->x, m->p, m->u, m->gx);
  if (${P}_NU > 0) { ${id}_dfdu(m->time, m->x, m->p, m->u, m->fu); ${id}_dgdu(m->time, m->x, m->p, m->u, m->gu); }
  for (size_t a = 0; a < nUnknown; a++) {
    fmi2ValueReference r = vUnknown_ref[a];
    int isDer = r >= VR_DER && r < VR_PAR;
    int isOut = r >= VR_OUT && r < VR_END;
    if (!isDer && !isOut) { note(m, fmi2Error, "fmi2GetDirectionalDerivative: an unknown must be a derivative or an output"); return fmi2Error; }
    int i = isDer ? (int)(r - VR_DER) : (int)(r - VR_OUT);
    double si = isDer ? ${id}_state_scale[i] : ${id}_output_scale[i];
    double acc = 0.0;
    for (size_t b = 0; b < nKnown; b++) {
      fmi2ValueReference k = vKnown_ref[b];
      if (k < VR_DER) acc += (isDer ? m->fx[i * ${P}_NX + k] : m->gx[i * ${P}_NX + k]) * ${id}_state_scale[k] * dvKnown[b];
      else if (k >= VR_IN && k < VR_OUT) {
        int j = (int)(k - VR_IN);
        acc += (isDer ? m->fu[i * (${P}_NU + ${P}_ND) + j] : m->gu[i * (${P}_NU + ${P}_ND) + j]) * ${id}_input_scale[j] * dvKnown[b];
      } else { note(m, fmi2Error, "fmi2GetDirectionalDerivative: a known must be a state or an input"); return fmi2Error; }
    }
    dvUnknown[a] = acc / si;
  }
  return fmi2OK;
}

fmi2Status fmi2EnterEventMode(fmi2Component c) { return c ? fmi2OK : fmi2Error; }
fmi2Status fmi2NewDiscreteStates(fmi2Component c, fmi2EventInfo *info) {
  if (!c || !info) return fmi2Error;
  info->newDiscreteStatesNeeded = fmi2False;
  info->terminateSimulation = fmi2False;
  info->nominalsOfContinuousStatesChanged = fmi2False;
  info->valuesOfContinuousStatesChanged = fmi2False;
  info->nextEventTimeDefined = fmi2False;
  info->nextEventTime = 0.0;
  return fmi2OK;
}
fmi2Status fmi2EnterContinuousTimeMode(fmi2Component c) { return c ? fmi2OK : fmi2Error; }
fmi2Status fmi2CompletedIntegratorStep(fmi2Component c, fmi2Boolean noSetFMUStatePriorToCurrentPoint, fmi2Boolean *enterEventMode, fmi2Boolean *terminateSimulation) {
  (void)noSetFMUStatePriorToCurrentPoint;
  if (!c) return fmi2Error;
  if (enterEventMode) *enterEventMode = fmi2False;
  if (terminateSimulation) *terminateSimulation = fmi2False;
  return fmi2OK;
}
fmi2Status fmi2SetTime(fmi2Component c, fmi2Real time) { if (!c) return fmi2Error; ((Instance *)c)->time = time; return fmi2OK; }
fmi2Status fmi2SetContinuousStates(fmi2Component c, const fmi2Real x[], size_t nx) {
  Instance *m = (Instance *)c;
  if (!m || nx != ${P}_NX) return fmi2Error;
  for (size_t i = 0; i < nx; i++) m->x[i] = x[i] * ${id}_state_scale[i] + ${id}_state_offset[i];
  return fmi2OK;
}
fmi2Status fmi2GetDerivatives(fmi2Component c, fmi2Real derivatives[], size_t nx) {
  Instance *m = (Instance *)c;
  if (!m || nx != ${P}_NX) return fmi2Error;
  ${id}_rhs(m->time, m->x, m->p, m->u, m->f);
  for (size_t i = 0; i < nx; i++) derivatives[i] = m->f[i] / ${id}_state_scale[i];
  return fmi2OK;
}
fmi2Status fmi2GetEventIndicators(fmi2Component c, fmi2Real eventIndicators[], size_t ni) { (void)eventIndicators; return c && ni == 0 ? fmi2OK : fmi2Error; }
fmi2Status fmi2GetContinuousStates(fmi2Component c, fmi2Real x[], size_t nx) {
  Instance *m = (Instance *)c;
  if (!m || nx != ${P}_NX) return fmi2Error;
  for (size_t i = 0; i < nx; i++) x[i] = (m->x[i] - ${id}_state_offset[i]) / ${id}_state_scale[i];
  return fmi2OK;
}
fmi2Status fmi2GetNominalsOfContinuousStates(fmi2Component c, fmi2Real x_nominal[], size_t nx) {
  if (!c || nx != ${P}_NX) return fmi2Error;
  for (size_t i = 0; i < nx; i++) x_nominal[i] = 1.0;
  return fmi2OK;
}
`
}

export interface FmuExport {
  id: string
  guid: string
  modelDescription: string
  files: { name: string; data: string }[]
  zip: Uint8Array
}

export function exportFmu(parsed: ParsedModel, model: CompiledModel, p: Float64Array, meta: ExportMeta, id: string, x0?: Float64Array): FmuExport {
  refuseEvents(model, 'FMU')
  if (model.kind !== 'continuous') throw new AnalysisInputError('an FMU for Model Exchange needs a continuous sheet; this sheet is discrete (export it as C or an ES module)')
  if (model.nd > 0) throw new AnalysisInputError(`the sheet delays input(s) ${model.delays.map((d) => `'${model.inputs[d.input].name}'`).join(', ')}: Pewter's FMU export has no delay buffer (export as C or an ES module and supply the delayed values)`)
  const x = x0 ?? Float64Array.from(model.states, (s) => s.initial)
  const c = exportC(parsed, model, p, meta, id, x)
  const guid = fmuGuid(model, meta, p)
  const vars = fmuVariables(model, p, x)
  const glueName = `${id}_fmi2.c`
  const md = modelDescription(model, meta, id, guid, vars, [c.sourceName, glueName])
  const doc = [
    '<!DOCTYPE html>', '<html lang="en"><head><meta charset="utf-8"><title>', xml(meta.title), '</title></head><body>',
    `<h1>${xml(meta.title)}</h1>`,
    ...metaLines(meta).slice(1).map((l) => `<p>${xml(l)}</p>`),
    `<p>Variables are in the sheet's declared units; time in ${xml(model.timeUnit)}. Model Exchange only; compile sources/${xml(c.sourceName)} and sources/${xml(glueName)} with the standard's fmi2Functions.h.</p>`,
    '</body></html>', '',
  ].join('\n')
  const files = [
    { name: 'modelDescription.xml', data: md },
    { name: `sources/${c.headerName}`, data: c.header },
    { name: `sources/${c.sourceName}`, data: c.source },
    { name: `sources/${glueName}`, data: glue(model, id, guid, meta) },
    { name: 'documentation/index.html', data: doc },
  ]
  return { id, guid, modelDescription: md, files, zip: zipStore(files) }
}

