// `npm run -s pewter -- …`: runs the ahead-of-time bundle of the command line (scripts/cli-bundle.mjs),
// building it first when it is missing or older than its sources.
import { pathToFileURL } from 'node:url'
import { CLI_BUNDLE, ensureCli } from './cli-bundle.mjs'

await ensureCli()
await import(pathToFileURL(CLI_BUNDLE).href)
