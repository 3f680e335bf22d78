import defaultTheme from 'tailwindcss/defaultTheme';

/** Drawerlight's own palette: warm paper tones with a deep teal for actions. */
/** @type {import('tailwindcss').Config} */
export default {
  content: ['./src/**/*.{astro,html,js,jsx,ts,tsx,md}'],
  theme: {
    extend: {
      fontFamily: { sans: ['Inter', ...defaultTheme.fontFamily.sans] },
      colors: {
        paper: { 50: '#fbf8f2', 100: '#f4eee2', 200: '#e8dcc4', 300: '#d6c29c' },
        ink: { 500: '#5b5750', 700: '#3a3732', 900: '#1f1d1a' },
        lamp: { 500: '#0f766e', 600: '#0d5f59', 700: '#0b4c47' },
        warn: { 100: '#fdecd2', 700: '#8a4b08' },
        danger: { 100: '#fde2e1', 700: '#9b1c1c' },
      },
    },
  },
  plugins: [],
};
