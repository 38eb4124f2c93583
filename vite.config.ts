import { fileURLToPath, URL } from 'node:url'
import { defineConfig } from 'vite'
import vue from '@vitejs/plugin-vue'
import components from 'unplugin-vue-components/vite'
import { ElementPlusResolver } from 'unplugin-vue-components/resolvers'

const apiPort = process.env.API_PORT ?? '3000'

export default defineConfig({
  plugins: [
    vue(),
    // Element Plus on demand: each page's chunk imports only the components its templates use
    // (the styles come once from element-plus/dist/index.css in main.ts; types from element-plus/global)
    components({ resolvers: [ElementPlusResolver({ importStyle: false })], dts: false, dirs: [] }),
  ],
  resolve: {
    alias: {
      '@': fileURLToPath(new URL('./src', import.meta.url)),
      '@shared': fileURLToPath(new URL('./shared', import.meta.url)),
    },
  },
  server: {
    host: '127.0.0.1',
    proxy: { '/api': { target: `http://127.0.0.1:${apiPort}`, changeOrigin: false } },
  },
  build: { outDir: 'dist', chunkSizeWarningLimit: 6000, manifest: true },
})
