import svelte from 'eslint-plugin-svelte';
import ts from 'typescript-eslint';
import svelteConfig from './svelte.config.js';

export default ts.config(
	{ ignores: ['build/', '.svelte-kit/', '.data/', 'test-results/', 'node_modules/'] },
	...ts.configs.recommended,
	...svelte.configs.recommended,
	{
		files: ['**/*.svelte', '**/*.svelte.ts'],
		languageOptions: {
			parserOptions: { parser: ts.parser, extraFileExtensions: ['.svelte'], svelteConfig }
		}
	},
	{
		rules: {
			// Skein is served at the root (no paths.base), so plain absolute links are right
			'svelte/no-navigation-without-resolve': 'off',
			// Prettier writes {' '} to keep a space across a line break; that is what this rule flags
			'svelte/no-useless-mustaches': 'off',
			'@typescript-eslint/no-unused-vars': [
				'error',
				{ argsIgnorePattern: '^_', varsIgnorePattern: '^_', destructuredArrayIgnorePattern: '^_' }
			]
		}
	},
	{
		// ambient declarations describe other packages' exports
		files: ['**/*.d.ts'],
		rules: { '@typescript-eslint/no-unused-vars': 'off' }
	}
);
