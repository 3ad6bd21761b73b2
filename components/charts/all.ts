// Every chart, as one module: components/charts/lazy.tsx imports it on first use, so the charting library
// (react-native-gifted-charts, the console's largest package after the framework) travels in one chunk of
// its own, fetched by the screens that draw a chart and never by sign-in.
export { DayLineChart, Sparkline } from './line';
export { StackedBarChart } from './stacked-bars';
