// plotly.js-cartesian-dist-min 4.1 ships no typings; src/composables/usePlotly.ts types what it uses.
declare module 'plotly.js-cartesian-dist-min' {
  const Plotly: unknown
  export default Plotly
}
