(function(){
  var t=document.getElementById('index-table');if(!t)return;
  var tb=t.tBodies[0],heads=t.tHead.rows[0].cells,coll=new Intl.Collator(undefined,{numeric:true});
  Array.prototype.forEach.call(heads,function(th,c){th.addEventListener('click',function(){
    var num=th.dataset.type==='num',dir=th.getAttribute('aria-sort')==='ascending'?-1:1;
    Array.prototype.forEach.call(heads,function(h){h.removeAttribute('aria-sort');});
    th.setAttribute('aria-sort',dir>0?'ascending':'descending');
    var rows=Array.prototype.map.call(tb.rows,function(r){
      var cell=r.cells[c],k=cell.dataset.k!==undefined?cell.dataset.k:cell.textContent;
      return [num?(k===''?NaN:+k):k,r];});
    rows.sort(function(a,b){
      if(num){if(isNaN(a[0]))return isNaN(b[0])?0:1;if(isNaN(b[0]))return -1;return dir*(a[0]-b[0]);}
      return dir*coll.compare(a[0],b[0]);});
    var f=document.createDocumentFragment();rows.forEach(function(r){f.appendChild(r[1]);});tb.appendChild(f);
  });});
  var q=document.getElementById('filter');
  if(q)q.addEventListener('input',function(){var s=q.value.toLowerCase();
    Array.prototype.forEach.call(tb.rows,function(r){r.hidden=s!==''&&r.textContent.toLowerCase().indexOf(s)<0;});});
})();
