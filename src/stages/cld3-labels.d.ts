// The file of cld3-asm that holds CLD3's labels alone (language.ts reads it without loading the identifier).
declare module "cld3-asm/dist/cjs/languageCode.js" {
  export const LanguageCode: Record<string, string>;
}
