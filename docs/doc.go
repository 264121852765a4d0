// Package docs holds spotsift's written documentation (methods.md) and the test that
// keeps citations in the code pointing at documents that exist in the repository.
package docs
