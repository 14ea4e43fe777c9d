mod common;
use common::TestApp;
use serde_json::json;

#[tokio::test]
async fn healthz_and_a_first_interval() {
    let app = TestApp::spawn().await;
    let (s, _, v) = app.get("/healthz").await;
    assert_eq!(s, 200);
    assert_eq!(v["status"], "ok");
    let (s, ct, v) = app
        .post("/v1/interval", &json!({"data": [1.0, 2.0, 3.5, 4.0, 7.5], "seed": 3}))
        .await;
    assert_eq!(s, 200, "{v}");
    assert!(ct.starts_with("application/json"));
    assert_eq!(v["n"], 5);
    assert_eq!(v["resamples"], 2000);
}
