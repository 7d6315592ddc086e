#ifdef __cplusplus
extern "C" {
#endif
void gaptraceSilenceOpenCV(void);
#ifdef __cplusplus
}
#endif
