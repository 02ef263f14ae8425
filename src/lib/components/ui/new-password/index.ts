export { default as NewPasswordFields } from './NewPasswordFields.svelte';
