// Asking before an action that is hard to take back. Every question names
// the thing and says what will happen to it:
//   if (await confirmAction({ title: 'Deactivate Ada Moss?', consequence: 'She is signed out…', confirm: 'Deactivate' })) …
// TheConfirmDialog.vue (mounted once in App.vue) shows it.
import { shallowRef } from 'vue'

export interface ConfirmRequest {
  /** A question naming the thing: "Remove the source device Bench charger?" */
  title: string
  /** What follows, in plain words: "Its takes keep their files; the device leaves the catalogue." */
  consequence: string
  /** The verb on the button that goes ahead: "Remove", "Deactivate". */
  confirm: string
  /** The button that stays: defaults to "Keep it as it is". */
  cancel?: string
  /** Destroys or locks out: the go-ahead button is drawn as a warning. */
  danger?: boolean
}

export const pendingConfirm = shallowRef<(ConfirmRequest & { answer: (yes: boolean) => void }) | null>(null)

export function confirmAction(req: ConfirmRequest): Promise<boolean> {
  pendingConfirm.value?.answer(false)
  return new Promise((resolve) => {
    pendingConfirm.value = {
      ...req,
      answer: (yes) => {
        pendingConfirm.value = null
        resolve(yes)
      },
    }
  })
}
