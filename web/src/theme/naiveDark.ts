// Split point: importing this module dynamically keeps Naive UI's dark theme off the first load.
export { darkTheme } from 'naive-ui';
