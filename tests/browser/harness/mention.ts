// The comment box with the @-picker mounted on its own, for
// tests/browser/mention-input.test.ts: what the box asks to post appears in
// [data-test=posted].
import { createApp, defineComponent, h, ref } from 'vue'
import MentionInput from '@/components/MentionInput.vue'

const Harness = defineComponent(() => {
  const text = ref('')
  const posted = ref('')
  return () =>
    h('main', { style: 'max-width: 560px; margin: 40px auto; font-family: sans-serif' }, [
      h(MentionInput, {
        modelValue: text.value,
        'onUpdate:modelValue': (v: string) => (text.value = v),
        onSubmit: () => (posted.value = text.value),
      }),
      h('output', { 'data-test': 'posted' }, posted.value),
    ])
})

createApp(Harness).mount('#app')
