/** Usage lines, apart from the commands themselves, so the help text loads none of their modules. */
export const demoUsage = 'episcope demo [--out DIR] [--only NAME] [--quick]';
export const tdUsage = 'episcope td FILE --target SNAP [--episode E] [--rule dqn|double|nstep] [--n N] [--gamma G] [--truncation bootstrap|terminal] [--online SNAP] [--json]';
export const suspectsUsage = 'episcope suspects FILE [--target SNAP] [--top K] [--rule dqn|double|nstep] [--n N] [--gamma G] [--truncation bootstrap|terminal] [--json]';
export const healthUsage = 'episcope health FILE [--states K] [--json]';
export const viewUsage = 'episcope view FILE… [--target SNAP] [--port P]';
export const clipUsage = 'episcope clip FILE --episode E --from A --to B [--context K] [--target SNAP] [--title T] [--note TEXT] (-o OUT.steps | --page OUT.html) [--force]';
export { importUsage, importWhat, snapshotUsage, snapshotWhat } from '../import/usage.ts';
